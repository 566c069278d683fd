/**
 * End-to-end runs of the cluster executor through the real launcher (`./spindrift`, with its narrow
 * permissions), compared with a local run of the same study: the collected database must hold bit-identical
 * results (`digestResults`).
 *
 * 1. Without Slurm (always runs): the submission is written in-process with a stand-in for sbatch; the array
 *    tasks' command (`run-slice`) and `collect` run as subprocesses of the launcher.
 * 2. With a real single-node Slurm on 127.0.0.1 (`tools/slurm/start.sh`; `.ci/run` starts it): submit a
 *    small study as a job array, collect while it runs and after, resubmit what is missing, compare.
 *    When Slurm is not installed or does not come up, this test is reported as ignored, with the reason in
 *    its name and on the console — never passed silently.
 */
import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals } from "./_assert.ts";
import { digestResults, loadNormalizedForTest, REPO, runForTest } from "./_study.ts";
import { submitStudy } from "../study/executors/submit.ts";
import { resolveClusterResources } from "../study/executors/slurm_schema.ts";
import { readManifest } from "../study/executors/submission.ts";
import { FakeBatch, SMALL_STUDY, studyInTempDir, TEST_PROVENANCE } from "../study/executors/_testing.ts";

const LAUNCHER = `${REPO}spindrift`;
const dec = new TextDecoder();

async function launcher(
  args: string[],
  cwd: string,
): Promise<{ code: number; stdout: string; stderr: string }> {
  const out = await new Deno.Command(LAUNCHER, {
    args,
    cwd,
    stdout: "piped",
    stderr: "piped",
    env: { NO_COLOR: "1" },
  }).output();
  return { code: out.code, stdout: dec.decode(out.stdout), stderr: dec.decode(out.stderr) };
}

async function runText(cmd: string, args: string[]): Promise<{ ok: boolean; text: string }> {
  try {
    const out = await new Deno.Command(cmd, { args, stdout: "piped", stderr: "piped" }).output();
    return { ok: out.success, text: (dec.decode(out.stdout) + dec.decode(out.stderr)).trim() };
  } catch (e) {
    return { ok: false, text: e instanceof Deno.errors.NotFound ? "not found" : (e as Error).message };
  }
}

/** Why the real-Slurm test cannot run here, or null when a cluster answers with a usable node. */
async function slurmUnavailable(): Promise<string | null> {
  const nodeUp = async () => {
    const r = await runText("sinfo", ["-h", "-o", "%T"]);
    return r.ok && /^(idle|mixed|allocated)/m.test(r.text) ? null : r.text || "no node";
  };
  const sbatch = await runText("sbatch", ["--version"]);
  if (!sbatch.ok) {
    return "Slurm is not installed (sbatch not on PATH); run tools/slurm/start.sh as root (.ci/run does)";
  }
  if ((await nodeUp()) === null) return null;
  // Installed but not running: start the daemons (no package installation from inside a test).
  const start = await runText(`${REPO}tools/slurm/start.sh`, ["--no-install"]);
  const state = await nodeUp();
  if (state === null) return null;
  return `the local Slurm cluster did not come up (sinfo: ${state}; tools/slurm/start.sh: ${
    start.text.split("\n").pop()
  })`;
}

Deno.test("cluster CLI without Slurm: run-slice and collect through the launcher give the local results", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  await runForTest(study, `${dir}/local.sqlite`, 2);
  const batch = new FakeBatch();
  batch.nextJob = 987654;
  const dbPath = `${dir}/cluster-small.sqlite`;
  const r = await submitStudy(study, {
    dbPath,
    resultsDir: `${dir}/cluster-small-cluster`,
    resources: resolveClusterResources(undefined, { sliceSize: 4 }),
    launcher: LAUNCHER,
    provenance: TEST_PROVENANCE,
    batch,
  });
  const m = readManifest(r.paths!.manifest);
  // What the sbatch script runs in each array task (see job.sbatch), with the launcher's permissions.
  for (const [k] of m.slices.entries()) {
    const shard = `${r.paths!.dir}/shard-${m.jobId}-${k}.sqlite`;
    const t = await launcher(["run-slice", r.paths!.manifest, "--slice", String(k), "--shard", shard], dir);
    assertEquals(t.code, 0, t.stdout + t.stderr);
    assert(t.stdout.includes(`slice ${k} finished`), t.stdout);
  }
  const c = await launcher(["collect", studyPath], dir);
  assertEquals(c.code, 0, c.stdout + c.stderr);
  assert(c.stdout.includes("6 realisations added"), c.stdout);
  assert(c.stdout.includes("all 6 realisations are stored"), c.stdout);
  assertEquals(digestResults(dbPath), digestResults(`${dir}/local.sqlite`));
  const s = await launcher(["status", dbPath], dir);
  assertEquals(s.code, 0, s.stderr);
  assert(/initial\.count=12\s+3\s+0\s+0\s+0\s+0\s+0/.test(s.stdout), s.stdout);
  // A bad slice index gets one clear line, no stack trace.
  const bad = await launcher(
    ["run-slice", r.paths!.manifest, "--slice", "9", "--shard", `${dir}/x.sqlite`],
    dir,
  );
  assertEquals(bad.code, 1);
  assert(bad.stderr.includes("slice 9 does not exist: submission"), bad.stderr);
  assert(!/\n\s+at .+:\d+:\d+/.test(bad.stderr), bad.stderr);
});

Deno.test("launcher: run --cluster (and the deprecated --executor slurm) may ask Slurm; --dry-run writes the script", async () => {
  const { dir, studyPath } = studyInTempDir();
  for (const flags of [["--cluster"], ["--executor", "slurm"], ["--executor=slurm"]]) {
    const r = await launcher(["run", studyPath, ...flags, "--dry-run"], dir);
    assertEquals(r.code, 0, r.stdout + r.stderr);
    assert(r.stdout.includes("#SBATCH --array=0-"), r.stdout);
    // Without the launcher's --allow-run=sbatch,squeue the queue question would fail on permissions.
    assert(!r.stderr.includes("internal error") && !/NotCapable|--allow-run/.test(r.stderr), r.stderr);
    assertEquals(r.stderr.includes("--executor is deprecated"), flags[0] !== "--cluster", r.stderr);
  }
});

const unavailable = await slurmUnavailable();
if (unavailable !== null) console.log(`slurm_e2e_test: real-Slurm test skipped: ${unavailable}`);

Deno.test({
  name:
    "cluster on a real single-node Slurm: job array, collect while running, resubmit missing, same results" +
    (unavailable === null ? "" : ` (SKIPPED: ${unavailable})`),
  ignore: unavailable !== null,
  fn: async () => {
    const { dir, studyPath } = studyInTempDir(SMALL_STUDY);
    const study = await loadNormalizedForTest(studyPath);
    await runForTest(study, `${dir}/local.sqlite`, 2);
    const dbPath = `${dir}/cluster-small.sqlite`;

    // Submit: 3 array tasks of 2 realisations.
    const sub = await launcher(
      ["run", studyPath, "--cluster", "--slice-size", "2", "--time-limit", "10", "--memory", "1G"],
      dir,
    );
    assertEquals(sub.code, 0, sub.stdout + sub.stderr);
    const jobId = sub.stdout.match(/^submitted job (\d+): 3 array tasks × 2 realisations/m)?.[1];
    assert(jobId, sub.stdout);

    // Collect at once (tasks are still queued or running), then until everything is in.
    const early = await launcher(["collect", studyPath], dir);
    assertEquals(early.code, 0, early.stdout + early.stderr);
    const deadline = Date.now() + 90_000;
    let last = early.stdout;
    while (!last.includes("all 6 realisations are stored")) {
      assert(Date.now() < deadline, `the job array did not finish in 90 s; last collect:\n${last}`);
      await new Promise((r) => setTimeout(r, 2000));
      const c = await launcher(["collect", studyPath], dir);
      assertEquals(c.code, 0, c.stdout + c.stderr);
      last = c.stdout;
    }
    assertEquals(digestResults(dbPath), digestResults(`${dir}/local.sqlite`));

    // Nothing left to submit (asked with the deprecated spelling, which still gets the permissions it needs).
    const again = await launcher(["run", studyPath, "--executor", "slurm"], dir);
    assertEquals(again.code, 0, again.stderr);
    assert(again.stderr.includes("--executor is deprecated"), again.stderr);
    assert(again.stdout.includes("nothing to submit: of 6 realisations, 6 done"), again.stdout);

    // Lose one task's results (its shard and what was collected from it): only those two are resubmitted.
    const manifestDir = sub.stdout.match(/submission folder: (\S+)/)![1];
    const lost = readManifest(`${manifestDir}/manifest.json`).slices[1].map((e) => e.key);
    Deno.removeSync(`${manifestDir}/shard-${jobId}-1.sqlite`);
    const db = new DatabaseSync(dbPath);
    db.exec("PRAGMA foreign_keys = ON");
    for (const k of lost) db.prepare("DELETE FROM realisations WHERE realisation_key = ?").run(k);
    db.close();
    const status = await launcher(["status", dbPath], dir);
    assert(/missing: 2 realisations: 2 in 1 array task that ended/.test(status.stdout), status.stdout);
    const resub = await launcher(
      ["run", studyPath, "--cluster", "--time-limit", "10", "--memory", "1G", "--wait"],
      dir,
    );
    assertEquals(resub.code, 0, resub.stdout + resub.stderr);
    assert(
      /submitted job \d+: 2 array tasks × 1 realisation: 2 realisations of 6/.test(resub.stdout),
      resub.stdout,
    );
    assert(resub.stdout.includes("all 6 realisations are stored"), resub.stdout);
    assertEquals(digestResults(dbPath), digestResults(`${dir}/local.sqlite`));
  },
});
