import { assertEquals } from "../../test/_assert.ts";
import { explainMissing, inFlightKeys, pointProgress, type RealisationRef } from "./cluster_progress.ts";
import { MANIFEST_FORMAT, type SubmissionManifest } from "./submission.ts";
import { CLUSTER_DEFAULTS } from "./slurm_schema.ts";

const P0 = "0".repeat(64), P1 = "1".repeat(64);
const POINTS = [{ index: 0, label: "n=8", pointHash: P0 }, { index: 1, label: "n=16", pointHash: P1 }];

function ref(key: string, pointHash: string, idx: number, status: RealisationRef["status"]): RealisationRef {
  return { key, pointHash, idx, status };
}

function manifest(jobId: string | null, slices: [string, string, number][][]): SubmissionManifest {
  return {
    format: MANIFEST_FORMAT,
    id: `sub-${jobId}`,
    studyName: "x",
    studyHash: "ab".repeat(32),
    engine: { id: "e", version: "1" },
    studyFile: "s.yaml",
    studyTextSha256: "cd".repeat(32),
    sourcePath: "/x.yaml",
    database: "/x.sqlite",
    toolVersion: "test",
    createdAt: "2026-12-01T00:00:00Z",
    resources: { ...CLUSTER_DEFAULTS, extraLines: [] },
    sliceSize: 2,
    slices: slices.map((s) => s.map(([key, pointHash, index]) => ({ key, pointHash, index }))),
    jobId,
  };
}

Deno.test("pointProgress: database, shards and queue combine per point; counts add up to the plan", () => {
  // Point 0 (4 planned): a done in the database, b done only in a shard, c failed in the database but done
  // in a shard, d queued. Point 1: e running in a task, f never started, g beyond the plan (ignored).
  const stored = [ref("a", P0, 0, "done"), ref("c", P0, 2, "failed"), ref("x", P1, 3, "running")];
  const shards = [ref("b", P0, 1, "done"), ref("c", P0, 2, "done"), ref("g", P1, 9, "done")];
  const m = manifest("7", [[["d", P0, 3], ["e", P1, 0]], [["f", P1, 1]]]);
  const inFlight = inFlightKeys([m], new Map([["7", new Map([[0, "PENDING"]])]]));
  assertEquals([...inFlight.keys()], ["d", "e"]);
  const rows = pointProgress(POINTS, 4, { stored, shards, inFlight });
  assertEquals(rows.map((r) => [r.label, r.done, r.failed, r.uncollected, r.running, r.queued, r.missing]), [
    ["n=8", 3, 0, 2, 0, 1, 0],
    ["n=16", 0, 0, 0, 1, 1, 2],
  ]);
  for (const r of rows) assertEquals(r.done + r.failed + r.running + r.queued + r.missing, r.planned);
});

Deno.test("inFlightKeys: running beats pending for a key submitted twice; finished tasks do not count", () => {
  const a = manifest("7", [[["k", P0, 0]]]);
  const b = manifest("8", [[["k", P0, 0]], [["z", P0, 1]]]);
  const q = new Map([["7", new Map([[0, "PENDING"]])], ["8", new Map([[0, "RUNNING"], [1, "COMPLETED"]])]]);
  const f = inFlightKeys([a, b], q);
  assertEquals([...f.entries()].map(([k, t]) => [k, t.state, t.jobId]), [["k", "running", "8"]]);
  assertEquals(inFlightKeys([manifest(null, [[["k", P0, 0]]])], q).size, 0, "never submitted");
});

Deno.test("explainMissing: in flight, lost in an ended task (with its log), queue unknown, never submitted", () => {
  const m = manifest("7", [[["a", P0, 0], ["b", P0, 1]], [["c", P0, 2]]]);
  const subs = [{ dir: "/r/sub-7", manifest: m }];
  const inFlight = inFlightKeys([m], new Map([["7", new Map([[1, "RUNNING"]])]]));
  const r = explainMissing(["a", "b", "c", "d"], { submissions: subs, inFlight, queueKnown: true });
  assertEquals([r.count, r.inFlight, r.queueUnknown, r.neverSubmitted], [4, 1, 0, 1]);
  assertEquals(r.lostTasks, [{ jobId: "7", task: 0, count: 2, log: "/r/sub-7/task-7_0.log" }]);
  const unknown = explainMissing(["a", "d"], { submissions: subs, inFlight: new Map(), queueKnown: false });
  assertEquals([unknown.queueUnknown, unknown.neverSubmitted, unknown.lostTasks.length], [1, 1, 0]);
});
