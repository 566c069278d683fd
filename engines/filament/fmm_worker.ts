/// <reference lib="deno.worker" />
/**
 * FMM worker (see `fmm_threads.ts`): takes work units from the shared counter until none is left, computing
 * them into the shared output arrays, then signals completion.
 */
import { SegmentFmm } from "./fmm.ts";
import type { FmmTask } from "./fmm_threads.ts";
import type { SegmentTree } from "./tree.ts";

let fmm: SegmentFmm | null = null;
let kernel = "";

self.onmessage = (ev: MessageEvent<FmmTask>) => {
  const task = ev.data;
  Atomics.store(task.control, 2 + task.slot, 1);
  try {
    if (fmm === null || fmm.p !== task.order || kernel !== task.nearKernel) {
      fmm = new SegmentFmm(task.order, task.nearKernel);
      kernel = task.nearKernel;
    }
    fmm.multR = task.multR;
    fmm.loc = task.loc;
    fmm.rT = task.rT;
    fmm.m2lCount = 0;
    fmm.p2pPairs = 0;
    const t = task.tree as unknown as SegmentTree;
    for (;;) {
      const u = Atomics.add(task.control, 0, 1);
      if (u >= task.nUnits) break;
      fmm.runUnit(
        t,
        task.units[u],
        task.x,
        task.y,
        task.z,
        task.prev,
        task.cf,
        task.theta,
        task.vx,
        task.vy,
        task.vz,
      );
    }
    task.stats[2 * task.slot] = fmm.m2lCount;
    task.stats[2 * task.slot + 1] = fmm.p2pPairs;
  } catch (e) {
    Atomics.add(task.control, 2, 1);
    throw e;
  } finally {
    Atomics.add(task.control, 1, 1);
    Atomics.notify(task.control, 1);
  }
};
