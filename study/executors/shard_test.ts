import { assert, assertEquals, assertThrows } from "../../test/_assert.ts";
import { digestResults, loadNormalizedForTest, runForTest } from "../../test/_study.ts";
import { planStudy } from "../plan.ts";
import { StudyStore } from "../../store/db.ts";
import { mergeShard } from "../../store/merge.ts";
import { executeSlice } from "./shard.ts";
import { sliceList } from "./slices.ts";
import { studyInTempDir, TEST_PROVENANCE } from "./_testing.ts";
import { ExecutorError } from "./errors.ts";

Deno.test("executeSlice: slices run into shards and merged give the local run's database bit for bit", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  await runForTest(study, `${dir}/local.sqlite`, 2);
  const keys = planStudy(study).map((r) => r.key);
  const slices = sliceList(keys, 2); // 3 slices of 2
  for (const [k, slice] of slices.entries()) {
    const report = await executeSlice(study, slice, {
      shardPath: `${dir}/shard-${k}.sqlite`,
      provenance: TEST_PROVENANCE,
      workers: k === 1 ? 2 : 1, // the in-thread path and the worker pool
    });
    assertEquals([report.planned, report.completed, report.failures.length], [2, 2, 0]);
  }
  const store = StudyStore.open(`${dir}/merged.sqlite`);
  try {
    for (const k of [2, 0, 1]) {
      await mergeShard(store, `${dir}/shard-${k}.sqlite`, {
        studyHash: study.hash,
        engineId: study.engine.id,
        engineVersion: study.engine.version,
      });
    }
  } finally {
    store.close();
  }
  const local = digestResults(`${dir}/local.sqlite`);
  assert(local.length > 1000, "the digest covers real data");
  assertEquals(digestResults(`${dir}/merged.sqlite`), local);
});

Deno.test("executeSlice: a rerun of the same task resumes its shard (finished realisations are kept)", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const keys = planStudy(study).slice(0, 2).map((r) => r.key);
  const shardPath = `${dir}/shard.sqlite`;
  await executeSlice(study, keys.slice(0, 1), { shardPath, provenance: TEST_PROVENANCE });
  const again = await executeSlice(study, keys, { shardPath, provenance: TEST_PROVENANCE });
  assertEquals([again.skipped, again.completed], [1, 1]);
  await executeSlice(study, keys, { shardPath: `${dir}/whole.sqlite`, provenance: TEST_PROVENANCE });
  assertEquals(digestResults(shardPath), digestResults(`${dir}/whole.sqlite`));
});

Deno.test("executeSlice: a shard uses a rollback journal, not WAL (network file systems)", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const shardPath = `${dir}/shard.sqlite`;
  await executeSlice(study, [planStudy(study)[0].key], { shardPath, provenance: TEST_PROVENANCE });
  // SQLite file format, database header offsets 18 and 19: 1 = rollback journal, 2 = WAL.
  const header = Deno.readFileSync(shardPath).subarray(0, 20);
  assertEquals([header[18], header[19]], [1, 1]);
});

Deno.test("executeSlice: a key that is not part of the study is refused before anything runs", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  let error: unknown;
  try {
    await executeSlice(study, ["ab".repeat(32)], {
      shardPath: `${dir}/s.sqlite`,
      provenance: TEST_PROVENANCE,
    });
  } catch (e) {
    error = e;
  }
  assertThrows(
    () => {
      throw error;
    },
    ExecutorError,
    "is not part of study cluster-small",
  );
});

Deno.test("executeSlice: a new shard is built under a temporary name and renamed whole; a killed task's leftover is replaced", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  const shardPath = `${dir}/shard-7-1.sqlite`;
  // A temporary file left by a task killed while creating its shard is replaced.
  Deno.writeTextFileSync(`${shardPath}.part`, "left by a killed task");
  let seen = [] as string[];
  const report = await executeSlice(study, [planStudy(study)[0].key], {
    shardPath,
    provenance: TEST_PROVENANCE,
    onFinished: () => {
      // What a `collect` running now would open: the shard already holds its schema and study record.
      const s = StudyStore.open(shardPath, { command: "test", lock: false });
      try {
        seen = (s.db.prepare("SELECT study_hash FROM studies").all() as { study_hash: string }[])
          .map((r) => r.study_hash);
      } finally {
        s.close();
      }
    },
  });
  assertEquals(report.completed, 1);
  assertEquals(seen, [study.hash]);
  assertThrows(() => Deno.statSync(`${shardPath}.part`), Deno.errors.NotFound);
});
