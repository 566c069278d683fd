/**
 * Never losing a study, end to end through the command line: one database per study lineage (another study or
 * a seed edit deletes nothing), one writer at a time, Ctrl-C and SIGTERM that stop long realisations, damaged
 * and foreign files refused at the door and left as they were, read-only folders, hostile SQL and pre-flight
 * refusals. These are spindrift's own requirements (common practice, no source); every case was a failure of an
 * earlier build.
 */
import { DatabaseSync } from "node:sqlite";
import { createHash } from "node:crypto";
import { assert, assertEquals } from "./_assert.ts";
import { countWhere, digestResults, REPO } from "./_study.ts";
import { assertNoStackTrace, cli, PERMS, runCli } from "./_cli.ts";
import { damagePage } from "../store/_testing.ts";

function study(
  name: string,
  seed: number,
  opts: { counts?: string; duration?: number; interval?: number } = {},
) {
  return `
name: ${name}
description: safety end-to-end study
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 8, polarity: 0, shape: uniform-disk, radius: 1.0, minSeparation: 0.05 }
  annihilationDistance: 0.01
sweep:
  grid:
    initial.count: ${opts.counts ?? "[8, 12]"}
realisations: 3
seed: ${seed}
run: { duration: ${opts.duration ?? 0.3}, sampleInterval: ${
    opts.interval ?? 0.1
  }, tolerance: 1.0e-6, workers: 1 }
`;
}

function fileHash(path: string): string {
  return createHash("sha256").update(Deno.readFileSync(path)).digest("hex");
}

function sh(dir: string, name: string, text: string): string {
  Deno.writeTextFileSync(`${dir}/${name}`, text);
  return `${dir}/${name}`;
}

async function until(pred: () => boolean, what: string, seconds = 120): Promise<void> {
  const deadline = Date.now() + seconds * 1000;
  while (!pred()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

function doneCount(db: string): number {
  try {
    return countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'");
  } catch {
    return 0;
  }
}

Deno.test("another study is refused (nothing touched) unless allowed, and never deletes the first study's results", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const other = sh(dir, "other.yaml", study("other", 9));
    const base = sh(dir, "base.yaml", study("base", 7));
    const db = `${dir}/other.sqlite`;
    assertEquals((await runCli(["run", other, "-q"])).code, 0);
    const before = digestResults(db);
    const refused = await runCli(["run", base, "--db", db, "-q"]);
    assertEquals(refused.code, 1, refused.stderr);
    assert(
      refused.stderr.includes("belongs to study 'other'") && refused.stderr.includes("--allow-other-study"),
    );
    assertNoStackTrace(refused.stderr);
    assertEquals(digestResults(db), before, "nothing stored changed");
    const allowed = await runCli(["run", base, "--db", db, "-q", "--allow-other-study"]);
    assertEquals(allowed.code, 0, allowed.stderr);
    assert(allowed.stdout.includes("6 computed"), allowed.stdout);
    const after = digestResults(db);
    for (const line of before.split("\n").filter((l) => l.startsWith("["))) assert(after.includes(line));
    assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE master_seed = '9'"), 6);
    const again = await runCli(["run", base, "--db", db, "-q"]);
    assertEquals(again.code, 0, "the name was accepted for good");
    assert(again.stdout.includes("0 computed, 6 already stored"), again.stdout);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("a seed edit is a new revision: the old realisations stay, status counts the new seed's", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = sh(dir, "s.yaml", study("seeded", 7));
    const db = `${dir}/seeded.sqlite`;
    assertEquals((await runCli(["run", path, "-q"])).code, 0);
    sh(dir, "s.yaml", study("seeded", 8));
    const second = await runCli(["run", path, "-q"]);
    assert(second.stdout.includes("6 computed, 0 already stored"), second.stdout);
    assertEquals(doneCount(db), 12, "both seeds' realisations are stored");
    const status = await runCli(["status", db]);
    assert(/initial\.count=8\s+3\s+0\s+0\s+0/.test(status.stdout), status.stdout);
    sh(dir, "s.yaml", study("seeded", 7));
    const back = await runCli(["run", path, "-q"]);
    assert(back.stdout.includes("0 computed, 6 already stored"), back.stdout);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("a second writer is refused with the holder's host and process id; the first is not disturbed", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = sh(dir, "busy.yaml", study("busy", 3, { counts: "[8, 300]", duration: 200, interval: 1 }));
    const db = `${dir}/busy.sqlite`;
    const first = cli(["run", path, "-q"]).spawn();
    await until(() => doneCount(db) >= 1 && running(db) >= 1, "the first run to be computing");
    const second = await runCli(["run", path, "-q", "--fresh"]);
    assertEquals(second.code, 1, second.stderr);
    assert(second.stderr.includes(`is being written by 'spindrift run'`), second.stderr);
    assert(second.stderr.includes(`process ${first.pid}`), second.stderr);
    const analyse = await runCli(["analyse", db]);
    assertEquals(analyse.code, 1, "analyse respects the lock too");
    assert(analyse.stderr.includes("is being written by"), analyse.stderr);
    assertEquals(running(db), 1, "the first run's realisation is still running");
    first.kill("SIGINT");
    const status = await first.status;
    await first.stdout.cancel();
    await first.stderr.cancel();
    assertEquals(status.code, 130);
    assertEquals(doneCount(db), 1, "--fresh of the refused run deleted nothing");
    assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM pending_frames"), 0, "no orphan frames");
    const check = new DatabaseSync(db, { readOnly: true });
    assertEquals(String(Object.values(check.prepare("PRAGMA integrity_check").get()!)[0]), "ok");
    check.close();
    const next = await runCli(["status", db]);
    assertEquals(next.code, 0, "once the holder has ended, the database is free");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

// A realisation that runs for minutes (300 vortices for 200 time units) must stop within a few seconds of
// Ctrl-C or SIGTERM; finished realisations are kept and nothing unfinished is left in the database.
Deno.test("Ctrl-C and SIGTERM stop a long realisation within seconds, exit 130 and 143, keep what finished", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = sh(dir, "long.yaml", study("long", 5, { counts: "[8, 300]", duration: 200, interval: 1 }));
    const db = `${dir}/long.sqlite`;
    for (const [signal, code] of [["SIGINT", 130], ["SIGTERM", 143]] as const) {
      const child = cli(["run", path, "-q"]).spawn();
      // Wait until the long realisation (300 vortices; the short ones come first, then it) is computing.
      await until(() => doneCount(db) >= 1 && running(db) >= 1, "the long realisation to start");
      await new Promise((r) => setTimeout(r, 300));
      const sent = performance.now();
      child.kill(signal);
      const status = await child.status;
      const seconds = (performance.now() - sent) / 1000;
      const err = new TextDecoder().decode(await new Response(child.stderr).arrayBuffer());
      await child.stdout.cancel();
      assertEquals(status.code, code, err);
      assert(seconds < 15, `stopped ${seconds.toFixed(1)} s after ${signal} (a few seconds expected)`);
      assert(err.includes("stopping"), err);
      assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'running'"), 0);
      assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM pending_frames"), 0);
      assert(!existsSync(`${db}.lock`), "the writer lock was released");
    }
    assert(doneCount(db) >= 1, "the finished realisations are kept");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

function running(db: string): number {
  try {
    return countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'running'");
  } catch {
    return 0;
  }
}

function existsSync(path: string): boolean {
  try {
    Deno.statSync(path);
    return true;
  } catch {
    return false;
  }
}

Deno.test("a damaged database is refused by every command, left as it was, and salvaged into a sound file", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = sh(dir, "film.yaml", study("film", 2, { counts: "[40, 48]", duration: 2, interval: 0.05 }));
    const db = `${dir}/film.sqlite`;
    assertEquals((await runCli(["run", path, "-q"])).code, 0);
    damagePage(db, 0.4);
    const before = fileHash(db);
    for (
      const args of [
        ["status", db],
        ["query", db, "SELECT COUNT(*) FROM realisations"],
        ["export", db, "--realisation", "1"],
        ["report", db, "-o", `${dir}/r.html`],
        ["analyse", db],
        ["run", path, "-q"],
      ]
    ) {
      const r = await runCli(args);
      assertEquals(r.code, 1, `${args[0]}: ${r.stdout}${r.stderr}`);
      assert(r.stderr.includes("is damaged") && r.stderr.includes(`spindrift salvage ${db}`), r.stderr);
      assertNoStackTrace(r.stderr);
    }
    assertEquals(fileHash(db), before, "no command wrote into the damaged file");
    const verify = await runCli(["verify", db]);
    assertEquals(verify.code, 1);
    assert(verify.stdout.includes("DAMAGED"), verify.stdout);
    const salvage = await runCli(["salvage", db]);
    assertEquals(salvage.code, 0, salvage.stderr);
    assert(/salvaged \d+ realisations/.test(salvage.stdout), salvage.stdout);
    const good = await runCli(["verify", `${dir}/film-salvaged.sqlite`]);
    assertEquals(good.code, 0, good.stdout + good.stderr);
    assert(good.stdout.includes("sound"), good.stdout);
    // Resuming into the salvaged file computes only what was lost.
    const resumed = await runCli(["run", path, "--db", `${dir}/film-salvaged.sqlite`, "-q"]);
    assertEquals(resumed.code, 0, resumed.stderr);
    assertEquals(doneCount(`${dir}/film-salvaged.sqlite`), 6);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("another program's SQLite file given as --db is refused and left byte for byte as it was", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = sh(dir, "s.yaml", study("s", 1));
    const foreign = `${dir}/lab-inventory.db`;
    const f = new DatabaseSync(foreign);
    f.exec("CREATE TABLE dewars (id INTEGER PRIMARY KEY, litres REAL); INSERT INTO dewars VALUES (1, 60)");
    f.close();
    const before = fileHash(foreign);
    const r = await runCli(["run", path, "--db", foreign, "-q"]);
    assertEquals(r.code, 1);
    assert(
      r.stderr.includes("not a spindrift study database") && r.stderr.includes("left unchanged"),
      r.stderr,
    );
    assertEquals(fileHash(foreign), before);
    assertEquals([...Deno.readDirSync(dir)].map((e) => e.name).sort(), ["lab-inventory.db", "s.yaml"]);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("query refuses empty text, a second statement and anything that writes; a runaway query is stopped", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = sh(dir, "q.yaml", study("q", 1));
    const db = `${dir}/q.sqlite`;
    assertEquals((await runCli(["run", path, "-q"])).code, 0);
    const before = fileHash(db);
    const cases: [string, string][] = [
      ["", "no SQL statement"],
      ["  -- only a comment", "no SQL statement"],
      ["SELECT 1; DELETE FROM realisations", "one statement"],
      ["DELETE FROM realisations", "statements that read"],
      [`VACUUM INTO '${dir}/copy.sqlite'`, "statements that read"],
      [`ATTACH '${dir}/x.db' AS x`, "statements that read"],
      ["PRAGMA writable_schema = 1", "more than read"],
      ["WITH x AS (SELECT 1) DELETE FROM realisations", "more than read"],
    ];
    for (const [sql, message] of cases) {
      const r = await runCli(["query", db, sql]);
      assertEquals(r.code, 1, `${sql}: ${r.stdout}`);
      assert(r.stderr.includes(message), `${sql}: ${r.stderr}`);
      assertNoStackTrace(r.stderr);
    }
    const ok = await runCli([
      "query",
      db,
      "SELECT COUNT(*) AS n FROM realisations; -- count them",
      "-f",
      "csv",
    ]);
    assertEquals([ok.code, ok.stdout.trim()], [0, "n\n6"]);
    const t0 = performance.now();
    const runaway = await runCli([
      "query",
      db,
      "WITH RECURSIVE c(x) AS (SELECT 1 UNION ALL SELECT x + 1 FROM c) SELECT COUNT(*) FROM c",
      "--time-limit",
      "1",
    ]);
    assertEquals(runaway.code, 1);
    assert(runaway.stderr.includes("stopped after 1 s"), runaway.stderr);
    assert((performance.now() - t0) / 1000 < 30, "the time limit ends the command");
    assertEquals(fileHash(db), before, "the database is unchanged");
    assert(!existsSync(`${dir}/copy.sqlite`) && !existsSync(`${dir}/x.db`), "no file was written elsewhere");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("pre-flight: check and run refuse an unbounded run and 10⁹ realisations before anything is written", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const huge = sh(dir, "huge.yaml", study("huge", 1, { duration: 1e308 }));
    const check = await runCli(["check", huge]);
    assertEquals(check.code, 1);
    assert(check.stdout.includes("too large: each realisation would store"), check.stdout);
    assert(check.stderr.includes("would refuse this study"), check.stderr);
    const run = await runCli(["run", huge, "-q"]);
    assertEquals(run.code, 1);
    assert(run.stderr.includes("the study was not started") && run.stderr.includes("--force"), run.stderr);
    const axis = Array.from({ length: 10 }, (_, i) => 1 + i / 1000).join(", ");
    const many = sh(
      dir,
      "many.yaml",
      study("many", 1).replace("realisations: 3", "realisations: 1000000").replace(
        "    initial.count: [8, 12]",
        `    initial.radius: [${axis}]\n    friction.alpha: [${axis.replaceAll("1.", "0.")}]\n` +
          `    initial.centre: [${Array.from({ length: 10 }, (_, i) => `[${i}, 0]`).join(", ")}]`,
      ),
    );
    const refused = await runCli(["run", many, "-q"]);
    assertEquals(refused.code, 1, refused.stdout);
    assert(refused.stderr.includes("to plan 1.00e+9 realisations"), refused.stderr);
    assertEquals([...Deno.readDirSync(dir)].map((e) => e.name).sort(), ["huge.yaml", "many.yaml"]);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

/** The command, run as user nobody when this test runs as root (root ignores folder permissions). */
function asUser(args: string[], home: string): Deno.Command {
  const deno = [Deno.execPath(), "run", "--quiet", "--no-prompt", ...PERMS, `${REPO}cli/main.ts`, ...args];
  const env = { DENO_NO_UPDATE_CHECK: "1", NO_COLOR: "1", DENO_DIR: `${home}/deno`, HOME: home };
  return Deno.uid() === 0
    ? new Deno.Command("setpriv", {
      args: ["--reuid=65534", "--regid=65534", "--clear-groups", ...deno],
      stdout: "piped",
      stderr: "piped",
      env,
    })
    : new Deno.Command(deno[0], { args: deno.slice(1), stdout: "piped", stderr: "piped", env });
}

/** True when the unprivileged user can run the command line and read `studyPath` (its folders let it in). */
async function canRunAsUser(home: string, studyPath: string): Promise<boolean> {
  try {
    const out = await asUser(["check", studyPath], home).output();
    return out.code === 0;
  } catch {
    return false;
  }
}

Deno.test("a database in a read-only folder is read by status, query and report; run says what is wrong", async () => {
  const dir = Deno.makeTempDirSync();
  const ro = `${dir}/archive`;
  try {
    Deno.mkdirSync(ro);
    const path = sh(ro, "a.yaml", study("a", 1));
    assertEquals((await runCli(["run", path, "-q"])).code, 0);
    const home = `${dir}/home`;
    Deno.mkdirSync(home);
    Deno.chmodSync(dir, 0o755);
    Deno.chmodSync(home, 0o777);
    if (!(await canRunAsUser(home, path))) {
      console.warn("  (skipped: cannot run a command as an unprivileged user here)");
      return;
    }
    Deno.chmodSync(`${ro}/a.sqlite`, 0o444);
    Deno.chmodSync(path, 0o444);
    Deno.chmodSync(ro, 0o555);
    const run = async (args: string[]) => {
      const out = await asUser(args, home).output();
      const dec = new TextDecoder();
      return { code: out.code, stdout: dec.decode(out.stdout), stderr: dec.decode(out.stderr) };
    };
    const status = await run(["status", `${ro}/a.sqlite`]);
    assertEquals(status.code, 0, status.stderr);
    assert(status.stdout.includes("study a"), status.stdout);
    const query = await run([
      "query",
      `${ro}/a.sqlite`,
      "SELECT COUNT(*) AS n FROM realisations",
      "-f",
      "csv",
    ]);
    assertEquals([query.code, query.stdout.trim()], [0, "n\n6"], query.stderr);
    const report = await run(["report", `${ro}/a.sqlite`, "-o", `${home}/a.html`]);
    assertEquals(report.code, 0, report.stderr);
    const write = await run(["run", path, "-q"]);
    assertEquals(write.code, 1);
    assert(/cannot write|read-only|writer lock/.test(write.stderr), write.stderr);
    assertNoStackTrace(write.stderr);
  } finally {
    Deno.chmodSync(ro, 0o755);
    Deno.removeSync(dir, { recursive: true });
  }
});
