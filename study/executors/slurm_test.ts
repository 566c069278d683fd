import { assertEquals, assertThrows } from "../../test/_assert.ts";
import { BatchSystemError, isActiveState, parseJobId, parseQueue } from "./slurm.ts";

Deno.test("parseQueue: squeue -r -o '%F|%K|%T' lines become job → task → state; non-array jobs are left out", () => {
  // squeue(1): %F "Job array's base job ID", %K "Job array's index", %T "Job state, extended form";
  // -r/--array "Display one job array element per line". Non-array jobs show %K as "N/A".
  const q = parseQueue(
    "4711|0|RUNNING\n4711|1|PENDING\n4711|2|PENDING\n4800|N/A|RUNNING\n\n4712|5|COMPLETING\n",
  );
  assertEquals([...q.keys()], ["4711", "4712"]);
  assertEquals([...q.get("4711")!.entries()], [[0, "RUNNING"], [1, "PENDING"], [2, "PENDING"]]);
  assertEquals(q.get("4712")!.get(5), "COMPLETING");
  assertEquals(parseQueue("").size, 0);
});

Deno.test("parseJobId: sbatch --parsable prints 'jobid' or 'jobid;cluster'", () => {
  // sbatch(1), --parsable: "Outputs only the job id number and the cluster name if present. The values are
  // separated by a semicolon."
  assertEquals(parseJobId("4711\n"), "4711");
  assertEquals(parseJobId("4711;cluster-a\n"), "4711");
  assertThrows(() => parseJobId("Submitted batch job\n"), BatchSystemError, "without a job id");
});

Deno.test("isActiveState: pending-like states are queued, running-like are running, final states are not active", () => {
  // Job state codes from squeue(1), "JOB STATE CODES".
  for (const s of ["PENDING", "REQUEUED", "SUSPENDED", "CONFIGURING"]) {
    assertEquals(isActiveState(s), "queued", s);
  }
  for (const s of ["RUNNING", "COMPLETING", "STAGE_OUT"]) assertEquals(isActiveState(s), "running", s);
  for (
    const s of ["COMPLETED", "FAILED", "CANCELLED", "TIMEOUT", "OUT_OF_MEMORY", "NODE_FAIL", "PREEMPTED"]
  ) {
    assertEquals(isActiveState(s), null, s);
  }
});
