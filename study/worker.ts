/// <reference lib="deno.worker" />
/**
 * Worker entry: computes realisations sent by the runner and posts back frame batches and outcomes.
 * Messages in:  { type: "task", id, task: RealisationTask }
 * Messages out: { type: "frames", id, frames } (buffers transferred), { type: "outcome", id, outcome }
 */
import { executeRealisation, type RealisationTask } from "./execute.ts";
import type { FrameRow } from "../store/db.ts";

interface TaskMessage {
  readonly type: "task";
  readonly id: number;
  readonly task: RealisationTask;
}

self.onmessage = async (ev: MessageEvent<TaskMessage>) => {
  const { id, task } = ev.data;
  const outcome = await executeRealisation(task, (frames: FrameRow[]) => {
    self.postMessage({ type: "frames", id, frames }, frames.map((f) => f.data.buffer as ArrayBuffer));
  });
  self.postMessage({ type: "outcome", id, outcome });
};
