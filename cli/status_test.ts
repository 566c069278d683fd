import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals } from "../test/_assert.ts";
import { normalizeText, runForTest } from "../test/_study.ts";
import { finished, readStatus, statusCommand } from "./status.ts";
import { tempDir } from "../test/_tmp.ts";

const STUDY = `
name: status-small
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 8, radius: 1.0 }
sweep:
  grid:
    initial.count: [6, 8]
realisations: 3
seed: 3
run: { duration: 0.2, sampleInterval: 0.1 }
`;

/** A database with point 0 complete and point 1 missing one realisation and running another. */
async function partlyRun(): Promise<string> {
  const dir = tempDir("spindrift-status-");
  const dbPath = `${dir}/status-small.sqlite`;
  await runForTest(normalizeText(STUDY), dbPath, 1);
  const db = new DatabaseSync(dbPath);
  db.exec("PRAGMA foreign_keys = ON");
  const point1 = "(SELECT point_hash FROM study_points WHERE point_index = 1)";
  db.exec(`DELETE FROM realisations WHERE point_hash = ${point1} AND idx = 2`);
  db.exec(`UPDATE realisations SET status = 'running' WHERE point_hash = ${point1} AND idx = 1`);
  db.close();
  return dbPath;
}

const keys = (o: unknown) => Object.keys(o as object).sort();

Deno.test("status --json: per point and in total, done, failed, running and missing, in the documented shape", async () => {
  const dbPath = await partlyRun();
  const db = new DatabaseSync(dbPath, { readOnly: true });
  const { report, lines } = await readStatus(db, dbPath);
  db.close();
  const r = JSON.parse(JSON.stringify(report));
  assertEquals(keys(r), [
    "at",
    "cluster",
    "database",
    "points",
    "realisationsPerPoint",
    "study",
    "totals",
    "writer",
  ]);
  assertEquals(r.writer, null); // no run is writing the database
  assertEquals(keys(r.study), ["id", "lastRunAt", "name"]);
  assertEquals(r.study.name, "status-small");
  assertEquals(r.realisationsPerPoint, 3);
  assertEquals(r.cluster, null);
  assertEquals(r.points, [
    { index: 0, label: "initial.count=6", planned: 3, done: 3, failed: 0, running: 0, missing: 0 },
    { index: 1, label: "initial.count=8", planned: 3, done: 1, failed: 0, running: 1, missing: 1 },
  ]);
  assertEquals(r.totals, { planned: 6, done: 4, failed: 0, running: 1, missing: 1 });
  assert(!Number.isNaN(Date.parse(r.at)));
  assertEquals(finished(report), false);
  assert(/initial\.count=8\s+1\s+0\s+1\s+1/.test(lines.join("\n")), lines.join("\n"));
});

Deno.test("status --watch: refreshes until stopped, one JSON object per line with --json", async () => {
  const dbPath = await partlyRun();
  const controller = new AbortController();
  const written: string[] = [];
  const done = statusCommand(dbPath, { json: true, watch: 1, signal: controller.signal }, (t) => {
    written.push(t);
    if (written.length === 2) controller.abort();
  });
  await done;
  assertEquals(written.length, 2, "stops at the abort (Ctrl-C)");
  for (const w of written) {
    assert(!w.includes("\n"), "one line per refresh");
    assertEquals(JSON.parse(w).totals.missing, 1);
  }
  // Resumed to the end (the running row is rerun, the missing one run), the watch ends by itself.
  const text: string[] = [];
  const complete = await runForTest(normalizeText(STUDY), dbPath, 1);
  assertEquals(complete.failed, 0);
  await statusCommand(dbPath, { watch: 60 }, (t) => text.push(t));
  assertEquals(text.length, 1);
  assert(
    text[0].includes("6 of 6 finished (100 %)") && text[0].includes("every planned realisation"),
    text[0],
  );
});
