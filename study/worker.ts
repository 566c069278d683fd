/// <reference lib="deno.worker" />
/**
 * Worker entry: computes realisations sent by the pool (`pool.ts`) and posts back frame batches and outcomes.
 * Messages in:  { type: "task", id, task: RealisationTask, written: Int32Array on a SharedArrayBuffer }
 * Messages out: { type: "frames", id, frames } (buffers transferred), { type: "outcome", id, outcome } (with the
 *               realisation's measured `usage`: thread CPU time and peak memory, for pilots; never stored),
 *               { type: "stopped", id } when the task's stop flag was set (nothing to store)
 *
 * Back-pressure: `written[0]` counts the frame batches the main thread has stored. A worker that runs ahead
 * (fast engines, e.g. imported files) waits once MAX_IN_FLIGHT batches are unwritten, so frames never pile up
 * in memory between the threads. The wait also ends when the stop flag is set (the main thread stops storing).
 */
import { executeRealisation, type RealisationTask } from "./execute.ts";
import { UsageMeter } from "./usage.ts";
import type { FrameRow } from "../store/db.ts";
import { RealisationStopped } from "../engines/contract.ts";

/** Frame batches (≤ 4 MiB each) that may be posted but not yet stored. */
const MAX_IN_FLIGHT = 4;

interface TaskMessage {
  readonly type: "task";
  readonly id: number;
  readonly task: RealisationTask;
  readonly written: Int32Array;
}

self.onmessage = async (ev: MessageEvent<TaskMessage>) => {
  const { id, task, written } = ev.data;
  let posted = Atomics.load(written, 0);
  const stopped = () => task.stopFlag !== undefined && Atomics.load(task.stopFlag, 0) !== 0;
  const meter = new UsageMeter();
  try {
    const outcome = await executeRealisation(task, (frames: FrameRow[]) => {
      meter.sample();
      for (;;) {
        if (stopped()) throw new RealisationStopped();
        const done = Atomics.load(written, 0);
        if (posted - done < MAX_IN_FLIGHT) break;
        Atomics.wait(written, 0, done, 100);
      }
      self.postMessage({ type: "frames", id, frames }, frames.map((f) => f.data.buffer as ArrayBuffer));
      posted++;
    });
    self.postMessage({ type: "outcome", id, outcome: { ...outcome, usage: meter.finish() } });
  } catch (e) {
    if (!(e instanceof RealisationStopped)) throw e;
    self.postMessage({ type: "stopped", id });
  }
};
