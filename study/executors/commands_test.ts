import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals, assertThrows } from "../../test/_assert.ts";
import { loadNormalizedForTest } from "../../test/_study.ts";
import { checkExecutorOptions, clusterRunCommand, clusterStatusLines, collectCommand } from "./commands.ts";
import { readManifest } from "./submission.ts";
import { runSliceTask } from "./shard.ts";
import { ExecutorError } from "./errors.ts";
import { FakeBatch, studyInTempDir, TEST_PROVENANCE } from "./_testing.ts";

Deno.test("checkExecutorOptions: options of the other place to run are refused by name", () => {
  assertEquals(checkExecutorOptions({}), "local");
  assertEquals(checkExecutorOptions({ cluster: false, sbatchLine: [], dryRun: false }), "local");
  assertEquals(checkExecutorOptions({ cluster: true, partition: "p" }), "slurm");
  assertThrows(
    () => checkExecutorOptions({ partition: "p" }),
    ExecutorError,
    "--partition only applies with --cluster",
  );
  assertThrows(() => checkExecutorOptions({ sbatchLine: ["--qos=x"] }), ExecutorError, "--sbatch-line");
  assertThrows(
    () => checkExecutorOptions({ cluster: true, workers: 2 }),
    ExecutorError,
    "--workers does not",
  );
  assertThrows(() => checkExecutorOptions({ cluster: true, fresh: true }), ExecutorError, "--fresh does not");
});

Deno.test("checkExecutorOptions: the old spelling --executor local|slurm still works, with a deprecation message", () => {
  const said: string[] = [];
  const warn = (l: string) => said.push(l);
  assertEquals(checkExecutorOptions({ executor: "slurm", partition: "p" }, warn), "slurm");
  assertEquals(checkExecutorOptions({ executor: "local" }, warn), "local");
  assertEquals(checkExecutorOptions({ executor: "slurm", cluster: true }, warn), "slurm");
  assertEquals(said, [
    "--executor is deprecated and will be removed in the next release: write --cluster instead of --executor slurm",
    "--executor is deprecated and will be removed in the next release: leave out --executor local (running on " +
    "this machine is the default)",
    "--executor is deprecated and will be removed in the next release: write --cluster instead of --executor slurm",
  ]);
  assertThrows(() => checkExecutorOptions({ executor: "pbs" }), ExecutorError, "--executor pbs is not known");
  assertThrows(
    () => checkExecutorOptions({ executor: "local", cluster: true }),
    ExecutorError,
    "contradict each other",
  );
  assertThrows(
    () => checkExecutorOptions({ executor: "local", memory: "4G" }),
    ExecutorError,
    "with --cluster",
  );
});

/** A small study in a temp folder, its database path, a fake scheduler and an environment recording lines. */
async function clusterFixture() {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const dbPath = `${dir}/cluster-small.sqlite`;
  const batch = new FakeBatch();
  const lines: string[] = [];
  const env = {
    write: (l: string) => lines.push(l),
    note: (l: string) => lines.push(`note: ${l}`),
    provenance: TEST_PROVENANCE,
    batch,
  };
  return { study, dbPath, batch, lines, env };
}

Deno.test("cluster commands: submit, status before and after a task, collect report what happened", async () => {
  const { study, dbPath, batch, lines, env } = await clusterFixture();
  // Queue answers in call order: at submission (empty), for the first status (task 0 running, task 1
  // pending), then empty again (both tasks ended; only task 0 stored anything).
  let polls = 0;
  batch.queue = () => {
    polls++;
    if (polls === 2) return Promise.resolve(new Map([["100", new Map([[0, "RUNNING"], [1, "PENDING"]])]]));
    return Promise.resolve(new Map());
  };
  const code = await clusterRunCommand(study, { dbPath, launcher: "/opt/spindrift", sliceSize: 3 }, env);
  assertEquals(code, 0);
  assert(
    lines[0].startsWith("submitted job 100: 2 array tasks × 3 realisations: 6 realisations of 6"),
    lines[0],
  );
  const manifestPath = lines[1].match(/submission folder: (\S+)/)![1] + "/manifest.json";
  // Status before anything ran: all six are in the queue's tasks.
  const status = () => {
    const db = new DatabaseSync(dbPath, { readOnly: true });
    return clusterStatusLines(db, { dbPath, batch }).finally(() => db.close());
  };
  const before = (await status())!;
  assert(before.some((l) => /initial\.count=12\s+0\s+0\s+3\s+0\s+0\s+0/.test(l)), before.join("\n"));
  assert(before.some((l) => l.includes("job 100, 2 tasks: 1 running, 1 queued")), before.join("\n"));
  // One task runs: its shard is visible to status before collecting.
  await runSliceTask(manifestPath, 0, {
    shardPath: manifestPath.replace("manifest.json", "shard-100-0.sqlite"),
    provenance: TEST_PROVENANCE,
  });
  const after = (await status())!;
  assert(after.some((l) => /initial\.count=12\s+3\s+0\s+0\s+0\s+0\s+3/.test(l)), after.join("\n"));
  assert(
    after.some((l) => l.startsWith("3 finished realisations in shards not collected yet")),
    after.join("\n"),
  );
  lines.length = 0;
  assertEquals(await collectCommand(study, { dbPath }, env), 0);
  assert(lines[0].startsWith("collected 1 shard of 1"), lines[0]);
  assert(lines[0].includes("3 realisations added"), lines[0]);
  assert(
    lines.some((l) => l.startsWith("missing: 3 realisations: 3 in 1 array task that ended")),
    lines.join("\n"),
  );
  assert(lines.some((l) => l.includes("task 100_1 stored 3 fewer than planned")), lines.join("\n"));
  assert(lines.some((l) => l.startsWith("submit them with: spindrift run")), lines.join("\n"));
  assertEquals(readManifest(manifestPath).jobId, "100");
});

Deno.test("collectCommand: a refused shard is reported and the exit code is 1", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const sub = `${dir}/cluster-small-cluster/20261201T000000Z`;
  Deno.mkdirSync(sub, { recursive: true });
  Deno.writeTextFileSync(`${sub}/shard-1-0.sqlite`, "garbage ".repeat(1000));
  const lines: string[] = [];
  const env = { write: (l: string) => lines.push(l), provenance: TEST_PROVENANCE, batch: new FakeBatch() };
  assertEquals(await collectCommand(study, { dbPath: `${dir}/cluster-small.sqlite` }, env), 1);
  assert(
    lines.some((l) => l.startsWith(`refused ${sub}/shard-1-0.sqlite: the shard is damaged`)),
    lines.join("\n"),
  );
  assert(lines.some((l) => l.includes("never submitted")), lines.join("\n"));
});

Deno.test("collectCommand: without a results folder the message says how to submit", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const env = { write: () => {}, provenance: TEST_PROVENANCE, batch: new FakeBatch() };
  let error: unknown;
  try {
    await collectCommand(study, { dbPath: `${dir}/x.sqlite` }, env);
  } catch (e) {
    error = e;
  }
  assert(error instanceof ExecutorError && error.message.includes("there is no cluster results folder"));
  assert(error.hint?.includes("--cluster"));
});

Deno.test("clusterRunCommand --wait: polls until the job has left the queue, then collects", async () => {
  const { study, dbPath, batch, lines, env } = await clusterFixture();
  // The fake scheduler runs every task when it is first asked after the submission.
  let polls = 0;
  batch.queue = async () => {
    polls++;
    if (polls !== 2) return new Map();
    const manifestPath = `${batch.submitted[0].replace(/job\.sbatch$/, "")}manifest.json`;
    const m = readManifest(manifestPath);
    for (const [k] of m.slices.entries()) {
      await runSliceTask(manifestPath, k, {
        shardPath: manifestPath.replace("manifest.json", `shard-100-${k}.sqlite`),
        provenance: TEST_PROVENANCE,
      });
    }
    return new Map([["100", new Map([[0, "RUNNING"], [1, "COMPLETING"]])]]);
  };
  const flags = { dbPath, launcher: "/opt/spindrift", wait: true, pollSeconds: 0 };
  const code = await clusterRunCommand(study, flags, env);
  assertEquals(code, 0, lines.join("\n"));
  assert(lines.includes("note: job 100: 2 running, 0 queued"), lines.join("\n"));
  assert(lines.includes("job 100 finished; collecting"), lines.join("\n"));
  assert(lines.some((l) => l.includes("6 realisations added")), lines.join("\n"));
  assert(lines.includes("all 6 realisations are stored"), lines.join("\n"));
});
