/// <reference lib="deno.worker" />
/**
 * Worker of a `ThreadPool` (`thread_pool.ts`): runs its share of a task — chunks taken from the shared counter
 * until none is left, written into shared output arrays — then signals completion.
 */
import { SegmentFmm } from "./fmm.ts";
import { runFmmLeaves, runFmmUnits } from "./fmm_threads.ts";
import { NearScratch, runNearAdd, runNearApproach, runNearBuild } from "./near.ts";
import { FastRhsScratch, runFastRhs } from "./fast_rhs.ts";
import { runGeometry } from "./geometry.ts";
import { PairScratch, runReconnectSearch } from "./reconnect.ts";
import { FAILURES, type PoolMessage, WORKERS_DONE } from "./thread_pool.ts";

let fmm: SegmentFmm | null = null;
let kernel = "";
const scratch = new NearScratch();
const fastScratch = new FastRhsScratch();
const pairScratch = new PairScratch();

self.onmessage = (ev: MessageEvent<PoolMessage>) => {
  const { task, control, slot } = ev.data;
  Atomics.store(control, 2 + slot, 1);
  try {
    if (task.kind === "fmm" || task.kind === "fmm-leaves") {
      if (fmm === null || fmm.p !== task.order || kernel !== task.nearKernel) {
        fmm = new SegmentFmm(task.order, task.nearKernel);
        kernel = task.nearKernel;
      }
      if (task.kind === "fmm") runFmmUnits(fmm, task, control, slot);
      else runFmmLeaves(fmm, task, control, slot);
    } else if (task.kind === "fast-rhs") runFastRhs(task, control, fastScratch);
    else if (task.kind === "geometry") runGeometry(task, control, fastScratch.nodes, fastScratch.weights);
    else if (task.kind === "reconnect-search") runReconnectSearch(task, control, pairScratch);
    else if (task.kind === "near-add") runNearAdd(task, control);
    else if (task.kind === "near-approach") runNearApproach(task, control);
    else runNearBuild(task, control, scratch);
  } catch (e) {
    Atomics.add(control, FAILURES, 1);
    throw e;
  } finally {
    Atomics.add(control, WORKERS_DONE, 1);
    Atomics.notify(control, WORKERS_DONE);
  }
};
