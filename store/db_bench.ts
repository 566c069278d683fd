/**
 * Store write throughput: series rows per second through `finishRealisation` (one transaction, 100-row
 * multi-row INSERTs). Run: deno bench -A store/db_bench.ts  (rows/s = 200 000 / time per iteration).
 */
import { StudyStore } from "./db.ts";
import { recordOnePointStudy } from "./_testing.ts";

const ROWS = 200_000;
const SERIES = 20;
const path = Deno.makeTempFileSync({ suffix: ".sqlite" });
const store = StudyStore.open(path);
recordOnePointStudy(store, { name: "bench", studyHash: "bench" });
const perSeries = ROWS / SERIES;
const t = Float64Array.from({ length: perSeries }, (_, k) => k * 0.01);
const series = Object.fromEntries(
  Array.from({ length: SERIES }, (_, j) => [`s${j}`, { t, v: t.map((x) => Math.sin(x + j)) }]),
);
let index = 0;

Deno.bench(`store: ${ROWS} series rows in one realisation transaction`, () => {
  const id = store.beginRealisation({
    key: `k${index}`,
    pointHash: "p",
    index: index++,
    masterSeed: "1",
    seedHex: "0",
    engineId: "e",
    engineVersion: "1",
    host: "bench",
  });
  store.finishRealisation(id, {
    status: "done",
    wallSeconds: 0,
    simTimeReached: 0,
    scalars: {},
    series,
    events: [],
  });
});
