import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals } from "../test/_assert.ts";
import { normalizeText, runForTest } from "../test/_study.ts";
import { tempDir } from "../test/_tmp.ts";
import { readEnsembleResults } from "../store/ensemble.ts";
import { openStoreReadOnly, readStudy } from "../store/reads.ts";
import { analyseCommand } from "./analyse.ts";
import { ensembleCsv } from "./ensemble_export.ts";
import { reportCommand } from "./report.ts";

const STUDY = `
name: json-small
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 10, radius: 1.0 }
sweep:
  grid:
    initial.count: [8, 10]
realisations: 4
seed: 5
run: { duration: 1.0, sampleInterval: 0.1 }
`;

const QUICK = { replicates: 40, sensitivity: false, correlations: false, vinenReplicates: 0, workers: 1 };

const keys = (o: unknown) => Object.keys(o as object).sort();

let db: Promise<string> | null = null;
/** The small study, run once for all tests of this file. */
function studyDb(): Promise<string> {
  db ??= (async () => {
    const path = `${tempDir("spindrift-json-")}/json-small.sqlite`;
    await runForTest(normalizeText(STUDY), path, 1);
    return path;
  })();
  return db;
}

/** A copy of the database at `dest` with the `sql` statements applied; returns `dest`. */
function copyOf(path: string, dest: string, sql: readonly string[]): string {
  const src = new DatabaseSync(path, { readOnly: true });
  src.exec(`VACUUM INTO '${dest}'`);
  src.close();
  const w = new DatabaseSync(dest);
  for (const q of sql) w.exec(q);
  w.close();
  return dest;
}

/** Numbers in the JSON are finite or null (never NaN strings or Infinity). */
function finiteEverywhere(v: unknown, path = "$"): void {
  if (typeof v === "number") assert(Number.isFinite(v), `${path} is finite`);
  else if (Array.isArray(v)) v.forEach((x, i) => finiteEverywhere(x, `${path}[${i}]`));
  else if (typeof v === "object" && v !== null) {
    for (const [k, x] of Object.entries(v)) finiteEverywhere(x, `${path}.${k}`);
  }
}

Deno.test("analyse --json: one object in the documented shape, κ units labelled, every number finite or null", async () => {
  const path = await studyDb();
  const { lines, errors } = await analyseCommand(path, { ...QUICK, json: true });
  assertEquals(errors, []);
  assertEquals(lines.length, 1, "one JSON document, nothing else");
  const r = JSON.parse(lines[0]);
  finiteEverywhere(r);
  assertEquals(keys(r), [
    "bootstrap",
    "chi2Source",
    "database",
    "dimension",
    "errors",
    "points",
    "question",
    "rowsWritten",
    "study",
    "units",
  ]);
  assertEquals(r.database, path);
  assertEquals(keys(r.study), ["id", "name"]);
  assertEquals(r.study.name, "json-small");
  assertEquals(r.dimension, 2);
  assertEquals(r.units.kappa, 1, "κ units: κ = 1");
  assertEquals(r.units.diffusion, "D/κ");
  assertEquals(keys(r.bootstrap), ["replicates", "seedBase"]);
  assertEquals(r.bootstrap.replicates, 40);
  assert(
    r.question.every((l: string) => !l.startsWith("The question:")),
    "question lines without the prefix",
  );
  assertEquals(r.points.length, 2);
  for (const p of r.points) {
    assertEquals(keys(p), [
      "correlations",
      "diffusion",
      "evaporation",
      "index",
      "label",
      "pointHash",
      "realisations",
      "sensitivity",
      "vinen",
    ]);
    assertEquals(p.realisations, 4);
    assertEquals(keys(p.diffusion), [
      "dOverKappa",
      "estimators",
      "lossLimited",
      "lower",
      "reason",
      "reasons",
      "status",
      "support",
      "tauC",
      "upper",
      "value",
      "warnings",
      "window",
    ]);
    assert(
      ["ok", "no-diffusive-regime", "not-available", "error"].includes(p.diffusion.status),
      p.diffusion.status,
    );
    // A value only with a declared regime; no regime comes with its reasons.
    assertEquals(p.diffusion.value !== null, p.diffusion.status === "ok");
    if (p.diffusion.status !== "ok") assert(p.diffusion.reasons.length > 0, "reasons given");
    assert(
      p.diffusion.warnings.some((w: string) => w.includes("only 4 realisations")),
      "few-realisations warning",
    );
    assertEquals(keys(p.vinen), [
      "chi2",
      "dOverKappa",
      "lower",
      "mode",
      "notes",
      "reason",
      "reducedChi2",
      "status",
      "upper",
      "value",
    ]);
    assertEquals(keys(p.evaporation), [
      "evaporated",
      "lostFraction",
      "objects",
      "rate",
      "reason",
      "status",
      "tEnd",
      "tHalf",
    ]);
    assertEquals(p.evaporation.objects, "vortices");
    assertEquals(p.sensitivity.status, "not-available", "skipped when asked");
  }
  // The same rows are stored as the text output would have stored them.
  const store = openStoreReadOnly(path);
  const stored = readEnsembleResults(store, readStudy(store).id);
  store.close();
  assertEquals(r.rowsWritten, stored.length);
  const d0 = stored.find((x) =>
    x.analysis === "diffusion" && x.name === "D" && x.pointHash === r.points[0].pointHash
  );
  assertEquals(r.points[0].diffusion.value, d0?.value ?? null);
});

Deno.test("export --ensemble results|series: one header line, the stored numbers exactly, units per row", async () => {
  const path = await studyDb();
  const store0 = openStoreReadOnly(path);
  const hasRows = readEnsembleResults(store0, readStudy(store0).id).length > 0;
  store0.close();
  if (!hasRows) await analyseCommand(path, QUICK);
  const csv = ensembleCsv(path, "results").trimEnd().split("\n");
  assertEquals(
    csv[0],
    "point,label,analysis,name,value,lower,upper,unit,value_over_kappa,lower_over_kappa,upper_over_kappa," +
      "level,interval,status,reason,realisations",
  );
  const store = openStoreReadOnly(path);
  const stored = readEnsembleResults(store, readStudy(store).id);
  store.close();
  assertEquals(csv.length - 1, stored.length, "one row per stored result");
  const evap = stored.find((x) => x.analysis === "evaporation" && x.name === "evaporated")!;
  const row = csv.find((l) => l.startsWith("0,initial.count=8,evaporation,evaporated,"))!.split(",");
  assertEquals(row[4] === "" ? null : Number(row[4]), evap.value, "value round-trips exactly");
  assertEquals(row[7], "count");
  const dRow = csv.find((l) => l.includes(",diffusion,tau_c,"))!.split(",");
  assertEquals(dRow[7], "ℓ²/κ", "times in the study's time unit");
  const series = ensembleCsv(path, "series").trimEnd().split("\n");
  assertEquals(series[0], "point,label,series,k,t,n,mean,sd,lower,upper,level");
  const msd = series.filter((l) => l.split(",")[2] === "msd");
  assertEquals(msd.length, 2 * 11, "two points × 11 frames (t = 0 … 1 by 0.1)");
  assertEquals(msd[0].split(",").slice(3, 6), ["0", "0", "4"], "first frame: k = 0, t = 0, n = 4");
});

Deno.test("report: during a run, a provisional analysis marked unfinished and not stored; after it, a note when no analysis is stored", async () => {
  const path = await studyDb();
  const dir = tempDir("spindrift-live-");
  // A copy in the middle of its run: point 1 misses one realisation and has one still running.
  const point1 = "(SELECT point_hash FROM study_points WHERE point_index = 1)";
  const live = copyOf(path, `${dir}/live.sqlite`, [
    "DELETE FROM ensemble_results",
    `DELETE FROM realisations WHERE point_hash = ${point1} AND idx = 3`,
    `UPDATE realisations SET status = 'running' WHERE point_hash = ${point1} AND idx = 2`,
  ]);
  const lines = await reportCommand(live, { out: `${dir}/live.html`, liveReplicates: 40 });
  assert(lines[0].startsWith("the run is unfinished (6 of 8 realisations done)"), lines[0]);
  const page = await Deno.readTextFile(`${dir}/live.html`);
  assert(
    page.includes('id="run-unfinished"') && page.includes("provisional"),
    "page says the run is unfinished",
  );
  assert(page.includes('id="answer-headline"') && page.includes('class="card"'), "provisional answers shown");
  const check = new DatabaseSync(live, { readOnly: true });
  const n = check.prepare("SELECT COUNT(*) AS n FROM ensemble_results").get() as { n: number };
  check.close();
  assertEquals(n.n, 0, "nothing stored by the report");
  // A finished study without analysis: the terminal says to run analyse first.
  const bare = copyOf(path, `${dir}/bare.sqlite`, ["DELETE FROM ensemble_results"]);
  const bareLines = await reportCommand(bare, { out: `${dir}/bare.html` });
  assert(
    bareLines[0].includes("no analysis is stored") && bareLines[0].includes("spindrift analyse"),
    bareLines[0],
  );
});
