import { assert, assertEquals } from "../../test/_assert.ts";
import { digestResults, loadNormalizedForTest, runForTest } from "../../test/_study.ts";
import { planStudy } from "../plan.ts";
import { submitStudy } from "./submit.ts";
import { runSliceTask } from "./shard.ts";
import { collectStudy } from "./collect.ts";
import { readManifest } from "./submission.ts";
import { resolveClusterResources } from "./slurm_schema.ts";
import { FakeBatch, studyInTempDir, TEST_PROVENANCE } from "./_testing.ts";
import type { NormalizedStudy } from "../normalize.ts";

const LAUNCHER = "/opt/spindrift/spindrift";

function submit(study: NormalizedStudy, dir: string, batch: FakeBatch, extra: { sliceSize?: number } = {}) {
  return submitStudy(study, {
    dbPath: `${dir}/main.sqlite`,
    resultsDir: `${dir}/results`,
    resources: resolveClusterResources(undefined, extra),
    launcher: LAUNCHER,
    provenance: TEST_PROVENANCE,
    batch,
  });
}

/** Runs every slice of a submission the way its array tasks would; returns the shard paths. */
async function runAllSlices(manifestPath: string, only?: number[]): Promise<string[]> {
  const m = readManifest(manifestPath);
  const dir = manifestPath.replace(/\/manifest\.json$/, "");
  const shards: string[] = [];
  for (const [k] of m.slices.entries()) {
    if (only && !only.includes(k)) continue;
    const shardPath = `${dir}/shard-${m.jobId}-${k}.sqlite`;
    await runSliceTask(manifestPath, k, { shardPath, provenance: TEST_PROVENANCE });
    shards.push(shardPath);
  }
  return shards;
}

Deno.test("submitStudy: writes the study copy, manifest and script, submits once and records the job id", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const batch = new FakeBatch();
  const r = await submit(study, dir, batch, { sliceSize: 4 });
  assertEquals([r.planned, r.submitted, r.tasks, r.sliceSize, r.jobId], [6, 6, 2, 4, "100"]);
  assertEquals(batch.submitted, [r.paths!.script]);
  const m = readManifest(r.paths!.manifest);
  assertEquals(m.jobId, "100");
  assertEquals(m.studyHash, study.hash);
  assertEquals(m.slices.map((s) => s.length), [4, 2]);
  assertEquals(m.slices.flat().map((e) => e.key), planStudy(study).map((p) => p.key), "plan order, all keys");
  assertEquals(Deno.readTextFileSync(`${dir}/results/${m.studyFile}`), study.text);
  assertEquals(Deno.readTextFileSync(r.paths!.script), r.script);
  assert(r.script!.includes("#SBATCH --array=0-1\n"), r.script!);
});

Deno.test("submitStudy: a dry run writes and submits nothing", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const batch = new FakeBatch();
  const r = await submitStudy(study, {
    dbPath: `${dir}/main.sqlite`,
    resultsDir: `${dir}/results`,
    resources: resolveClusterResources(undefined),
    launcher: LAUNCHER,
    provenance: TEST_PROVENANCE,
    batch,
    dryRun: true,
  });
  assertEquals([r.tasks, r.jobId], [6, null]);
  assert(r.script!.startsWith("#!/bin/sh"));
  assertEquals(batch.submitted.length, 0);
  assertEquals([...Deno.readDirSync(dir)].map((e) => e.name), ["study.yaml"]);
});

Deno.test("submitStudy: nothing is submitted while the earlier job still has the realisations queued", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const batch = new FakeBatch();
  await submit(study, dir, batch, { sliceSize: 3 });
  batch.queueState = new Map([["100", new Map([[0, "RUNNING"], [1, "PENDING"]])]]);
  const again = await submit(study, dir, batch);
  assertEquals([again.inFlight, again.submitted, again.script], [6, 0, null]);
  assertEquals(batch.submitted.length, 1);
  // One task has left the queue without storing anything: its three realisations are submitted again.
  batch.queueState = new Map([["100", new Map([[1, "PENDING"]])]]);
  const third = await submit(study, dir, batch);
  assertEquals([third.inFlight, third.submitted], [3, 3]);
});

Deno.test("submitStudy: without the queue, earlier realisations are submitted again and the reason is given", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const batch = new FakeBatch();
  await submit(study, dir, batch);
  batch.failQueue = "squeue: command not found";
  const again = await submit(study, dir, batch);
  assertEquals(again.submitted, 6);
  assert(again.queueProblem?.includes("squeue: command not found"), String(again.queueProblem));
});

Deno.test("submitStudy: a refused submission leaves no submission folder behind", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const batch = new FakeBatch();
  batch.failSubmit = "sbatch: error: invalid partition specified: nope";
  let error: unknown;
  try {
    await submit(study, dir, batch);
  } catch (e) {
    error = e;
  }
  assert(String(error).includes("invalid partition"), String(error));
  assertEquals(
    [...Deno.readDirSync(dir)].map((e) => e.name),
    ["study.yaml"],
    "no results folder, no database",
  );
});

Deno.test("cluster path without Slurm: submit, tasks, collect, resubmit the missing → the local database", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  await runForTest(study, `${dir}/local.sqlite`, 1);
  const batch = new FakeBatch();
  const first = await submit(study, dir, batch, { sliceSize: 2 });
  // Task 1 "was killed": it never wrote its shard.
  await runAllSlices(first.paths!.manifest, [0, 2]);
  const collectOpts = {
    dbPath: `${dir}/main.sqlite`,
    resultsDir: `${dir}/results`,
    provenance: TEST_PROVENANCE,
    batch,
  };
  const c1 = await collectStudy(study, collectOpts);
  assertEquals(c1.merged.reduce((s, m) => s + m.added, 0), 4);
  assertEquals(c1.missing.count, 2);
  assertEquals(c1.missing.lostTasks.map((t) => [t.jobId, t.task, t.count]), [["100", 1, 2]]);
  assert(c1.missing.lostTasks[0].log.endsWith("task-100_1.log"));

  const second = await submit(study, dir, batch);
  assertEquals([second.done, second.submitted, second.tasks], [4, 2, 2]);
  const resubmitted = readManifest(second.paths!.manifest).slices.flat().map((e) => e.index);
  assertEquals(resubmitted, [2, 0], "the lost task's slice: realisation 2 of point 0, 0 of point 1");
  await runAllSlices(second.paths!.manifest);
  const c2 = await collectStudy(study, collectOpts);
  assertEquals([c2.missing.count, c2.rejected.length], [0, 0]);
  assertEquals(c2.points.map((p) => [p.done, p.failed, p.missing]), [[3, 0, 0], [3, 0, 0]]);
  assertEquals(digestResults(`${dir}/main.sqlite`), digestResults(`${dir}/local.sqlite`));
  const nothing = await submit(study, dir, batch);
  assertEquals([nothing.done, nothing.submitted], [6, 0]);
});
