/**
 * External programs through the command line, as a user runs them: `./spindrift check` prints the exact command
 * of the first realisation; `./spindrift run` starts the study's program (the launcher grants permission for it
 * alone), stores each realisation's record and failures, and continues past failing programs; a run killed
 * outright resumes with only the unfinished realisations, storing what an uninterrupted run stores; Ctrl-C stops
 * the programs of the realisations in flight; cluster array tasks (`run-slice`) run the program too and give the
 * local results.
 *
 * These tests need the external engines in engines/registry.ts (they are skipped, with this reason in their
 * names, until then).
 */
import { assert, assertEquals } from "../_assert.ts";
import { DatabaseSync } from "node:sqlite";
import { ENGINES } from "../../engines/registry.ts";
import { countWhere, digestResults, loadNormalizedForTest, runForTest } from "../_study.ts";
import { submitStudy } from "../../study/executors/submit.ts";
import { resolveClusterResources } from "../../study/executors/slurm_schema.ts";
import { readManifest } from "../../study/executors/submission.ts";
import { FakeBatch, TEST_PROVENANCE } from "../../study/executors/_testing.ts";
import { alive, REPO, walkerStudyText } from "./_helpers.ts";

// The command line and database are spindrift's own (DEVELOPERS.md); resume and interruption behaviour are the
// project's reproducibility requirements. Common practice, no source.

const registered = ENGINES.some((e) => e.id === "external-program-2d");
const ignore = !registered;
const suffix = registered ? "" : " (skipped: register EXTERNAL_ENGINES in engines/registry.ts)";
const LAUNCHER = `${REPO}spindrift`;
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

async function spindrift(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  const out = await new Deno.Command(LAUNCHER, { args, stdout: "piped", stderr: "piped" }).output();
  const dec = new TextDecoder();
  return { code: out.code, stdout: dec.decode(out.stdout), stderr: dec.decode(out.stderr) };
}

function start(args: string[]): Deno.ChildProcess {
  return new Deno.Command(LAUNCHER, { args, stdout: "piped", stderr: "piped" }).spawn();
}

async function finish(child: Deno.ChildProcess): Promise<{ code: number; stdout: string; stderr: string }> {
  const out = await child.output();
  const dec = new TextDecoder();
  return { code: out.code, stdout: dec.decode(out.stdout), stderr: dec.decode(out.stderr) };
}

/** Count of rows of a query on a database that may still be written (0 while it does not exist yet). */
function countNow(db: string, sql: string): number {
  try {
    const d = new DatabaseSync(db, { readOnly: true });
    try {
      return Number((d.prepare(sql).get() as { c: number }).c);
    } finally {
      d.close();
    }
  } catch {
    return 0;
  }
}

async function studyIn(dir: string, text: string): Promise<string> {
  const path = `${dir}/walkers.yaml`;
  await Deno.writeTextFile(path, text);
  return path;
}

Deno.test({
  name: `spindrift check prints the exact command of the first realisation${suffix}`,
  ignore,
  fn: async () => {
    const dir = await Deno.makeTempDir({ prefix: "spindrift-cli-" });
    try {
      const study = await studyIn(dir, walkerStudyText());
      const r = await spindrift(["check", study]);
      assertEquals(r.code, 0, r.stderr);
      assert(r.stdout.includes("realisation 0 would run in "), r.stdout);
      assert(/\n {4}\/\S*node \S*walker\.mjs --seed \d+ --diffusion 0\.25 /.test(r.stdout), r.stdout);
      assert(r.stdout.includes("WALKER_COUNT=8"), r.stdout);
      assertEquals([...Deno.readDirSync(dir)].map((e) => e.name), ["walkers.yaml"], "check wrote nothing");
    } finally {
      await Deno.remove(dir, { recursive: true });
    }
  },
});

Deno.test({
  name: `spindrift run stores every program's record and continues past failing programs${suffix}`,
  ignore,
  fn: async () => {
    const dir = await Deno.makeTempDir({ prefix: "spindrift-cli-" });
    try {
      const study = await studyIn(dir, walkerStudyText({ faults: ["none", "exit"], realisations: 3 }));
      const db = `${dir}/w.sqlite`;
      const r = await spindrift(["run", study, "--db", db, "--workers", "2", "--quiet"]);
      assertEquals(r.code, 1, `${r.stdout}\n${r.stderr}`);
      assert(r.stdout.includes("3 computed") && r.stdout.includes("3 failed"), r.stdout);
      assert(r.stdout.includes("[program-failed] the program exited with code 3"), r.stdout);
      assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'"), 3);
      assertEquals(
        countWhere(
          db,
          "SELECT COUNT(*) AS c FROM realisations WHERE status = 'failed' AND failure_kind = 'program-failed' " +
            "AND error LIKE '%walker: failing on purpose%'",
        ),
        3,
      );
      // Every realisation, done or failed, has its program's record: argv, environment, exit code, output tails.
      const d = new DatabaseSync(db, { readOnly: true });
      try {
        const rows = d.prepare(
          `SELECT r.status, r.seed, e.data_json FROM events e JOIN realisations r ON r.id = e.realisation_id
           WHERE e.kind = 'program-run'`,
        ).all() as { status: string; seed: string; data_json: string }[];
        assertEquals(rows.length, 6);
        for (const row of rows) {
          const data = JSON.parse(row.data_json);
          assertEquals(data.exit_code, row.status === "done" ? 0 : 3);
          assert(
            data.detail.argv[0].endsWith("node") && data.detail.argv.includes(data.detail.seed),
            row.data_json,
          );
          assertEquals(data.detail.environment.SPINDRIFT_SEED, data.detail.seed);
        }
      } finally {
        d.close();
      }
    } finally {
      await Deno.remove(dir, { recursive: true });
    }
  },
});

Deno.test({
  name:
    `a run killed outright resumes with only the unfinished realisations and stores the same results${suffix}`,
  ignore,
  fn: async () => {
    const dir = await Deno.makeTempDir({ prefix: "spindrift-cli-" });
    try {
      const study = await studyIn(dir, walkerStudyText({ realisations: 8, delayMs: 400 }));
      const killed = `${dir}/killed.sqlite`;
      const child = start(["run", study, "--db", killed, "--workers", "2", "--quiet"]);
      const done = "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'";
      for (let i = 0; i < 400 && countNow(killed, done) < 2; i++) await sleep(25);
      child.kill("SIGKILL");
      await finish(child);
      const before = countNow(killed, done);
      assert(before >= 2 && before < 8, `${before} realisations were done when the run was killed`);
      // Programs started by the killed run were not stopped (nothing can run after SIGKILL); let them end.
      await sleep(1500);
      const resumed = await spindrift(["run", study, "--db", killed, "--workers", "2", "--quiet"]);
      assertEquals(resumed.code, 0, resumed.stderr);
      assert(resumed.stdout.includes(`${8 - before} computed, ${before} already stored`), resumed.stdout);
      const fresh = `${dir}/fresh.sqlite`;
      const full = await spindrift(["run", study, "--db", fresh, "--workers", "2", "--quiet"]);
      assertEquals(full.code, 0, full.stderr);
      assertEquals(digestResults(killed), digestResults(fresh));
    } finally {
      await Deno.remove(dir, { recursive: true });
    }
  },
});

Deno.test({
  name: `Ctrl-C stops the programs of the realisations in flight${suffix}`,
  ignore,
  fn: async () => {
    const dir = await Deno.makeTempDir({ prefix: "spindrift-cli-" });
    try {
      const study = await studyIn(
        dir,
        walkerStudyText({ faults: ["hang-hard"], realisations: 2, timeoutSeconds: 120 }),
      );
      const db = `${dir}/w.sqlite`;
      const child = start(["run", study, "--db", db, "--workers", "2", "--quiet"]);
      const pids: number[] = [];
      for (let i = 0; i < 400 && pids.length < 2; i++) {
        await sleep(25);
        pids.length = 0;
        try {
          for (const e of Deno.readDirSync(`${dir}/spindrift-work`)) {
            const text = Deno.readTextFileSync(`${dir}/spindrift-work/${e.name}/walker.pid`).trim();
            if (text !== "") pids.push(Number(text));
          }
        } catch {
          // not started yet
        }
      }
      assertEquals(pids.length, 2, "both programs started");
      // SIGINT to spindrift alone (a terminal would signal the programs too): spindrift must stop them itself.
      child.kill("SIGINT");
      const r = await finish(child);
      assertEquals(r.code, 130, r.stderr);
      for (const pid of pids) assertEquals(await alive(pid), false, `program ${pid} outlived spindrift`);
      assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'"), 0);
    } finally {
      await Deno.remove(dir, { recursive: true });
    }
  },
});

Deno.test({
  name: `cluster array tasks run the study's program and give the results of a local run${suffix}`,
  ignore,
  fn: async () => {
    const dir = await Deno.makeTempDir({ prefix: "spindrift-cli-" });
    try {
      const studyPath = await studyIn(dir, walkerStudyText({ faults: ["none", "exit"], realisations: 2 }));
      const study = await loadNormalizedForTest(studyPath);
      await runForTest(study, `${dir}/local.sqlite`, 2);
      // Submission with a stand-in for sbatch (as test/slurm_e2e_test.ts), then what each array task runs.
      const batch = new FakeBatch();
      const dbPath = `${dir}/cluster.sqlite`;
      const r = await submitStudy(study, {
        dbPath,
        resultsDir: `${dir}/cluster-results`,
        resources: resolveClusterResources(undefined, { sliceSize: 2 }),
        launcher: LAUNCHER,
        provenance: TEST_PROVENANCE,
        batch,
      });
      const m = readManifest(r.paths!.manifest);
      for (const [k] of m.slices.entries()) {
        const shard = `${r.paths!.dir}/shard-${m.jobId}-${k}.sqlite`;
        const t = await spindrift(["run-slice", r.paths!.manifest, "--slice", String(k), "--shard", shard]);
        assert(t.stdout.includes(`slice ${k} finished`), t.stdout + t.stderr);
      }
      const c = await spindrift([
        "collect",
        studyPath,
        "--db",
        dbPath,
        "--results",
        `${dir}/cluster-results`,
      ]);
      assertEquals(c.code, 0, c.stdout + c.stderr);
      assertEquals(countWhere(dbPath, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'"), 2);
      assertEquals(countWhere(dbPath, "SELECT COUNT(*) AS c FROM events WHERE kind = 'program-run'"), 4);
      assertEquals(digestResults(dbPath), digestResults(`${dir}/local.sqlite`));
    } finally {
      await Deno.remove(dir, { recursive: true });
    }
  },
});
