/**
 * Worker threads inside one realisation: `threads − 1` module workers (`pool_worker.ts`) plus the calling
 * thread share the chunks of one task (FMM work units, near-field target ranges) through an atomic counter on
 * shared memory. Every output value is computed by exactly one chunk, in the same order whoever runs it, so
 * results are bit-identical for any number of threads.
 *
 * The calling thread posts the task (typed arrays on SharedArrayBuffers), runs chunks itself, then blocks with
 * `Atomics.wait` until the workers are done (allowed in workers and in Deno's main thread). Workers are started
 * on first use and stopped by `close()`.
 *
 * References: ECMAScript shared memory and atomics (ECMA-262 §25.4); Deno module workers.
 *
 * @example
 * ```ts
 * import { ThreadPool } from "./thread_pool.ts";
 * const pool = new ThreadPool(2);
 * // pool.run(task, () => runChunks(task, pool.control)); … pool.close();
 * ```
 */
import type { FmmLeavesTask, FmmTask } from "./fmm_threads.ts";
import type { NearAddTask, NearApproachTask, NearBuildTask } from "./near.ts";
import type { FastRhsTask } from "./fast_rhs.ts";
import type { GeometryTask } from "./geometry.ts";
import type { ReconnectSearchTask } from "./reconnect.ts";

/** A task the workers know how to run (see `pool_worker.ts`). */
export type PoolTask =
  | FmmTask
  | FmmLeavesTask
  | NearAddTask
  | NearBuildTask
  | NearApproachTask
  | FastRhsTask
  | GeometryTask
  | ReconnectSearchTask;

/** Message to one worker: the task, the pool's control array and the worker's slot (1…threads − 1). */
export interface PoolMessage {
  readonly task: PoolTask;
  readonly control: Int32Array;
  readonly slot: number;
}

/** Control word indices: next chunk, workers done, failures, then one started flag per worker slot. */
export const NEXT_CHUNK = 0, WORKERS_DONE = 1, FAILURES = 2;

/** The calling thread plus `threads − 1` workers on shared memory (see module doc). */
export class ThreadPool {
  readonly threads: number;
  /** [next chunk, workers done, failures, started flag of worker 1, 2, …]. */
  readonly control: Int32Array;
  private workers: Worker[] = [];

  constructor(threads: number) {
    this.threads = Math.max(1, Math.floor(threads));
    this.control = new Int32Array(new SharedArrayBuffer(4 * (3 + this.threads)));
  }

  /**
   * Runs `task` on every worker while the calling thread runs `own` (which takes chunks from the same counter,
   * `control[NEXT_CHUNK]`); returns when all are done. Throws if a worker failed or did not start.
   */
  run(task: PoolTask, own: () => void): void {
    const control = this.control;
    for (let k = 0; k < control.length; k++) Atomics.store(control, k, 0);
    while (this.workers.length < this.threads - 1) {
      this.workers.push(new Worker(new URL("./pool_worker.ts", import.meta.url).href, { type: "module" }));
    }
    const w = this.workers.length;
    for (let k = 0; k < w; k++) {
      const msg: PoolMessage = { task, control, slot: k + 1 };
      this.workers[k].postMessage(msg);
    }
    own();
    const t0 = performance.now();
    for (;;) {
      const done = Atomics.load(control, WORKERS_DONE);
      if (done >= w) break;
      Atomics.wait(control, WORKERS_DONE, done, 1000);
      for (let k = 1; k <= w; k++) {
        if (Atomics.load(control, 2 + k) === 0 && performance.now() - t0 > 30000) {
          throw new Error(`worker thread ${k} did not start within 30 s (engines/filament/pool_worker.ts)`);
        }
      }
    }
    if (Atomics.load(control, FAILURES) > 0) {
      throw new Error(`a worker thread failed on a ${task.kind} task (see its error output)`);
    }
  }

  /** Stops the workers. */
  close(): void {
    for (const w of this.workers) w.terminate();
    this.workers = [];
  }
}
