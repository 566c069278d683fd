/** End-to-end runs of the command line as a user would type it (subprocesses of the real launcher path). */
import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals } from "./_assert.ts";
import { countWhere, digestResults, loadNormalizedForTest, runForTest } from "./_study.ts";
import { assertNoStackTrace, cli, runCli } from "./_cli.ts";
import { tempDir, tempFile } from "./_tmp.ts";

Deno.test("cli: --help lists the commands in plain words", async () => {
  const r = await runCli(["--help"]);
  assertEquals(r.code, 0);
  for (const c of ["check", "run", "report", "query", "export", "status", "demo"]) {
    assert(r.stdout.includes(`  ${c}`), `help lists ${c}`);
  }
});

Deno.test("cli: a wrong flag gets a one-line message with a suggestion, exit code 2", async () => {
  const r = await runCli(["run", "x.yaml", "--wokers", "2"]);
  assertEquals(r.code, 2);
  assert(r.stderr.includes("unknown option '--wokers'"), r.stderr);
  assert(r.stderr.includes("--workers"), r.stderr);
  assertNoStackTrace(r.stderr);
});

Deno.test("cli: a study file that does not exist gets one problem and a hint about the path", async () => {
  const r = await runCli(["run", "no-such-study.yaml"]);
  assertEquals(r.code, 1);
  assert(r.stderr.includes("cannot read the study file: there is no such file"), r.stderr);
  assert(r.stderr.includes("hint: check the path"), r.stderr);
  assertNoStackTrace(r.stderr);
});

Deno.test("cli: --help shows the typical session, analyse included", async () => {
  const r = await runCli(["--help"]);
  assert(/spindrift analyse my-study\.sqlite +estimate D\/κ/.test(r.stdout), r.stdout);
});

Deno.test("cli: check of a broken study lists problems with line numbers and no stack trace", async () => {
  const dir = tempDir();
  const path = `${dir}/bad.yaml`;
  Deno.writeTextFileSync(
    path,
    "name: bad\ndescription: x\nengine: point-vortex-2d\nparameters:\n  initial: { kind: random-cloud, count: -4, radius: 1 }\n" +
      "realisations: 0\nseed: 1\nrun: { duration: -1, sampleInterval: 0.1 }\n",
  );
  const r = await runCli(["check", path]);
  assertEquals(r.code, 1);
  assert(/bad\.yaml:\d+:\d+/.test(r.stderr), r.stderr);
  assert(r.stderr.includes("realisations"), r.stderr);
  assert(r.stderr.includes("run.duration"), r.stderr);
  assertNoStackTrace(r.stderr);
});

Deno.test("cli: a missing database gets a clear message", async () => {
  const r = await runCli(["query", "/nonexistent/x.sqlite", "SELECT 1"]);
  assertEquals(r.code, 1);
  assert(r.stderr.includes("does not exist"), r.stderr);
  assertNoStackTrace(r.stderr);
});

Deno.test("cli: a file that is not a study database gets a clear message on status, report and query", async () => {
  const path = tempFile(".sqlite");
  try {
    Deno.writeTextFileSync(path, "these are notes, not a database\n");
    for (const args of [["status", path], ["report", path], ["query", path, "SELECT 1"]]) {
      const r = await runCli(args);
      assertEquals(r.code, 1, args.join(" "));
      assert(r.stderr.includes("is not an SQLite database file"), r.stderr);
      assertNoStackTrace(r.stderr);
    }
  } finally {
    Deno.removeSync(path);
  }
});

const KILL_STUDY = `
name: kill-test
description: Resume after SIGKILL.
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 24, polarity: 0, shape: uniform-disk, radius: 1.0, minSeparation: 0.05 }
  annihilationDistance: 0.01
sweep:
  grid:
    initial.count: [16, 24]
realisations: 6
seed: 99
run: { duration: 1.5, sampleInterval: 0.05, tolerance: 1.0e-9 }
`;

Deno.test("cli: SIGKILL mid-run loses no finished realisation; resuming gives the uninterrupted database", async () => {
  const dir = tempDir();
  const studyPath = `${dir}/kill.yaml`;
  Deno.writeTextFileSync(studyPath, KILL_STUDY);
  const killedDb = `${dir}/killed.sqlite`;
  const child = cli(["run", studyPath, "--db", killedDb, "--workers", "2", "--quiet"]).spawn();
  // Wait until some realisations are committed, then kill without warning.
  const deadline = Date.now() + 120_000;
  let done = 0;
  while (Date.now() < deadline) {
    await new Promise((r) => setTimeout(r, 50));
    try {
      done = countWhere(killedDb, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'");
    } catch {
      continue; // not created yet
    }
    if (done >= 2) break;
  }
  child.kill("SIGKILL");
  const status = await child.status;
  await child.stdout.cancel();
  await child.stderr.cancel();
  assert(done >= 2, "the run committed realisations before the kill");
  assert(!status.success, "the run was killed before it finished");
  const db = new DatabaseSync(killedDb);
  const check = db.prepare("PRAGMA integrity_check").get() as Record<string, string>;
  assertEquals(Object.values(check)[0], "ok");
  const committed = Number(
    (db.prepare("SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'").get() as {
      c: number;
    }).c,
  );
  db.close();
  assert(committed >= done, "no finished realisation was lost");

  const resumed = await runCli(["run", studyPath, "--db", killedDb, "--workers", "2", "--quiet"]);
  assertEquals(resumed.code, 0, resumed.stderr + resumed.stdout);
  assert(resumed.stdout.includes("already stored"), resumed.stdout);

  const cleanDb = `${dir}/clean.sqlite`;
  const study = await loadNormalizedForTest(studyPath);
  await runForTest(study, cleanDb, 1);
  assertEquals(digestResults(killedDb), digestResults(cleanDb));
});

Deno.test("cli: run, status, query and export work together on a small study", async () => {
  const dir = tempDir();
  const studyPath = `${dir}/small.yaml`;
  Deno.writeTextFileSync(studyPath, KILL_STUDY.replace("realisations: 6", "realisations: 2"));
  const run = await runCli(["run", studyPath, "--workers", "2", "--quiet"]);
  assertEquals(run.code, 0, run.stderr);
  const dbPath = `${dir}/kill-test.sqlite`;
  assert(run.stdout.includes(dbPath), run.stdout);
  const status = await runCli(["status", dbPath]);
  assert(/initial\.count=16\s+2\s+0\s+0\s+0/.test(status.stdout), status.stdout);
  const q = await runCli([
    "query",
    dbPath,
    "SELECT COUNT(*) AS n FROM realisations WHERE status = 'done'",
    "-f",
    "json",
  ]);
  assertEquals(JSON.parse(q.stdout), [{ n: 4 }]);
  const ex = await runCli(["export", dbPath, "--point", "initial.count=24", "--index", "1"]);
  assertEquals(ex.code, 0, ex.stderr);
  const lines = ex.stdout.trim().split("\n");
  assertEquals(lines[0], "t,id,x,y,circulation,label"); // no comment line above the header
  const which = "realisation_id = (SELECT r.id FROM realisations r JOIN study_points sp USING (point_hash) " +
    "WHERE sp.point_index = 1 AND r.idx = 1)";
  const frames = countWhere(dbPath, `SELECT COUNT(*) AS c FROM frames WHERE ${which}`);
  const objects = countWhere(dbPath, `SELECT SUM(n) AS c FROM frames WHERE ${which}`);
  assert(frames > 10);
  assertEquals(lines.length - 1, objects);
  assert(/^0,\d+,-?[\d.e-]+,-?[\d.e-]+,-?1,(main|evaporated|stray)$/.test(lines[1]), lines[1]);
  assert(ex.stderr.includes("realisation 1 of point 1 (initial.count=24)"), ex.stderr);
  // The old option still works for one release and says what it meant.
  const old = await runCli(["export", dbPath, "--realisation", "1"]);
  assertEquals(old.code, 0, old.stderr);
  assert(old.stderr.includes("--realisation is deprecated") && old.stderr.includes("--id"), old.stderr);
  // A reader that stops early (`| head`) ends export and query quietly. The query's output (30000 rows) is far
  // larger than a pipe's buffer (64 KiB on Linux), so its writes do meet the closed pipe.
  const many =
    "WITH RECURSIVE c(i) AS (SELECT 1 UNION ALL SELECT i + 1 FROM c WHERE i < 30000) SELECT i FROM c";
  for (const args of [["export", dbPath, "-p", "1", "-i", "1", "-f", "jsonl"], ["query", dbPath, many]]) {
    const child = cli(args).spawn();
    const reader = child.stdout.getReader();
    await reader.read();
    await reader.cancel();
    const [ended, stderr] = await Promise.all([child.status, new Response(child.stderr).text()]);
    assertEquals(ended.code, 0, `${args[0]}: ${stderr}`);
    assert(!stderr.includes("error"), stderr);
  }
});

Deno.test("cli: new writes a starter study that check accepts, and never overwrites by accident", async () => {
  const dir = tempDir();
  const file = `${dir}/ring study.yaml`;
  const made = await runCli(["new", "vortex-filament-3d", file]);
  assertEquals(made.code, 0, made.stderr);
  assert(made.stdout.includes("spindrift check"), made.stdout);
  assert(Deno.readTextFileSync(file).includes("name: ring-study "), "study name from the file name");
  const check = await runCli(["check", file]);
  assertEquals(check.code, 0, check.stderr);
  assert(check.stdout.includes(": ok"), check.stdout);
  const again = await runCli(["new", "point-vortex-2d", file]);
  assertEquals(again.code, 1);
  assert(again.stderr.includes("exists already") && again.stderr.includes("--force"), again.stderr);
  assertNoStackTrace(again.stderr);
});
