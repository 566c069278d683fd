import { assertEquals, assertThrows } from "../test/_assert.ts";
import { DatabaseSync } from "node:sqlite";
import { StoreError, StudyStore } from "./db.ts";
import { decodeFrame, encodeFrame } from "./frame_codec.ts";
import { tempFile } from "../test/_tmp.ts";

function tempDb(): string {
  return tempFile(".sqlite");
}

function seedStudy(store: StudyStore): void {
  store.recordStudy({
    name: "t",
    description: "d",
    studyHash: "h1",
    sourcePath: null,
    text: "name: t",
    normalizedJson: '{"realisations":2}',
    engineId: "e",
    engineVersion: "1",
    toolVersion: "0",
    denoVersion: "2",
    gitCommit: null,
  }, [{
    pointIndex: 0,
    pointHash: "p1",
    paramsHash: "q1",
    label: "base",
    variedJson: "{}",
    paramsJson: "{}",
    controlsJson: "{}",
  }]);
}

function start(store: StudyStore, key: string, index: number): number {
  return store.beginRealisation({
    key,
    pointHash: "p1",
    index,
    masterSeed: "1",
    seedHex: "00",
    engineId: "e",
    engineVersion: "1",
    host: "h",
  });
}

Deno.test("StudyStore.finishRealisation makes frames, series, scalars and events visible in one step", () => {
  const path = tempDb();
  const store = StudyStore.open(path);
  seedStudy(store);
  const id = start(store, "k0", 0);
  const enc = encodeFrame(2, { id: new Int32Array([1, 2]), x: new Float64Array([0.1, Math.PI]) });
  store.appendFrames(id, [{ k: 0, t: 0, n: 2, layout: enc.layout, data: enc.data }]);
  const count = (table: string) =>
    (store.db.prepare(`SELECT COUNT(*) AS c FROM ${table}`).get() as { c: number }).c;
  assertEquals(count("frames"), 0);
  assertEquals(count("pending_frames"), 1);
  const n = 257; // more than two multi-row batches plus a remainder
  const t = Array.from({ length: n }, (_, k) => k * 0.5);
  store.finishRealisation(id, {
    status: "done",
    wallSeconds: 1,
    simTimeReached: 1,
    scalars: { a: 1.5, nan: Number.NaN },
    series: { s: { t, v: t.map((x) => x * x) } },
    events: [{ t: 0.2, kind: "annihilation", ids: [1, 2], data: { d: 0.01 } }],
  });
  assertEquals(count("pending_frames"), 0);
  assertEquals(count("frames"), 1);
  assertEquals(count("series"), n);
  const last = store.db.prepare("SELECT t, value FROM series WHERE k = ?").get(n - 1) as {
    t: number;
    value: number;
  };
  assertEquals({ ...last }, { t: (n - 1) * 0.5, value: ((n - 1) * 0.5) ** 2 });
  const nan = store.db.prepare("SELECT value FROM scalars WHERE name = 'nan'").get() as { value: null };
  assertEquals(nan.value, null);
  const f = store.db.prepare("SELECT layout, data, n FROM frames").get() as {
    layout: string;
    data: Uint8Array;
    n: number;
  };
  const dec = decodeFrame(f.layout, f.data, f.n);
  assertEquals(Array.from(dec.x), [0.1, Math.PI]);
  const row = store.db.prepare("SELECT status, frame_count FROM realisations WHERE id = ?").get(id);
  assertEquals({ ...row }, { status: "done", frame_count: 1 });
  store.close();
});

Deno.test("StudyStore.discardUnfinished removes running rows and their pending frames only", () => {
  const path = tempDb();
  const store = StudyStore.open(path);
  seedStudy(store);
  const done = start(store, "k0", 0);
  store.finishRealisation(done, {
    status: "done",
    wallSeconds: 0,
    simTimeReached: 0,
    scalars: {},
    series: {},
    events: [],
  });
  const running = start(store, "k1", 1);
  const enc = encodeFrame(1, { x: new Float64Array([1]) });
  store.appendFrames(running, [{ k: 0, t: 0, n: 1, layout: enc.layout, data: enc.data }]);
  store.close();
  const again = StudyStore.open(path);
  assertEquals(again.discardUnfinished(), 1);
  assertEquals([...again.realisationStatuses()], [["k0", "done"]]);
  again.close();
});

Deno.test("StudyStore.open refuses an SQLite file that is not a study database", () => {
  const path = tempDb();
  const db = new DatabaseSync(path);
  db.exec("CREATE TABLE other (x INTEGER)");
  db.close();
  assertThrows(() => StudyStore.open(path), StoreError, "not a spindrift study database");
});

Deno.test("StudyStore.recordStudy is idempotent on the study hash", () => {
  const path = tempDb();
  const store = StudyStore.open(path);
  seedStudy(store);
  seedStudy(store);
  const c = store.db.prepare("SELECT COUNT(*) AS c FROM studies").get() as { c: number };
  assertEquals(c.c, 1);
  store.close();
});
