/**
 * The worker pool shared by local runs (`runner.ts`) and cluster array tasks (`executors/shard.ts`): module
 * workers compute realisations (`worker.ts` → `executeRealisation`), this thread — the only writer — stores
 * what they send through the hooks. A crashed worker fails its realisation with the reason and is replaced.
 *
 * Aborting (Ctrl-C, SIGTERM) stops dispatching and sets the stop flag every worker's engine checks between steps
 * (`StopRequest` in engines/contract.ts): realisations in flight end within a fraction of a second, with nothing
 * to store; one that finishes meanwhile is still stored. Workers that have not answered after `STOP_GRACE_MS`
 * (an engine stuck in one long step) are terminated. The pool then resolves with `interrupted: true` and the
 * caller discards the unfinished rows, which the next run computes again.
 */
import type { NormalizedStudy } from "./normalize.ts";
import type { PlannedRealisation } from "./plan.ts";
import { taskFor } from "./runner.ts";
import type { FrameRow, RealisationOutcome } from "../store/db.ts";

/** What the pool asks of its caller, always on this thread. */
export interface PoolHooks {
  /** Records the start of a realisation; returns its row id. */
  begin(r: PlannedRealisation): number;
  /** Stores a batch of frames of a running realisation. */
  frames(rowId: number, frames: FrameRow[]): void;
  /** Stores a realisation's outcome. */
  finish(r: PlannedRealisation, rowId: number, outcome: RealisationOutcome): void;
}

type WorkerMessage =
  | { type: "frames"; id: number; frames: FrameRow[] }
  | { type: "outcome"; id: number; outcome: RealisationOutcome }
  | { type: "stopped"; id: number };

/** How long stopped workers may take to answer before they are terminated. */
export const STOP_GRACE_MS = 3000;

/** Runs `todo` on up to `workers` module workers; rejects if a hook throws. */
export function runRealisations(
  study: NormalizedStudy,
  todo: readonly PlannedRealisation[],
  workers: number,
  hooks: PoolHooks,
  signal?: AbortSignal,
): Promise<{ interrupted: boolean }> {
  return new Promise((resolve, reject) => {
    let next = 0;
    let active = 0;
    let ended = false;
    let stopping = false;
    let graceTimer: ReturnType<typeof setTimeout> | undefined;
    const stopFlag = new Int32Array(new SharedArrayBuffer(4));
    const pool: Worker[] = [];
    const jobs = new Map<Worker, { id: number; r: PlannedRealisation; rowId: number }>();
    /** Per worker: frame batches stored so far (shared with the worker for back-pressure, see worker.ts). */
    const written = new Map<Worker, Int32Array>();
    const end = (interrupted: boolean, error?: unknown) => {
      if (ended) return;
      ended = true;
      clearTimeout(graceTimer);
      Atomics.store(stopFlag, 0, 1);
      for (const w of pool) w.terminate();
      signal?.removeEventListener("abort", onAbort);
      if (error === undefined) resolve({ interrupted });
      else reject(error);
    };
    const onAbort = () => {
      if (stopping || ended) return;
      stopping = true;
      Atomics.store(stopFlag, 0, 1);
      for (const counter of written.values()) Atomics.notify(counter, 0);
      if (active === 0) return end(true);
      graceTimer = setTimeout(() => end(true), STOP_GRACE_MS);
    };
    if (signal?.aborted) return end(true);
    signal?.addEventListener("abort", onAbort);
    /** A realisation ended (stored or stopped): while stopping, the pool ends with the last one. */
    const settle = (w: Worker) => {
      if (stopping) {
        if (active === 0) end(true);
      } else dispatch(w);
    };

    const dispatch = (w: Worker) => {
      if (ended || stopping) return;
      if (next >= todo.length) {
        if (active === 0) end(false);
        return;
      }
      const id = next++;
      const r = todo[id];
      const rowId = hooks.begin(r);
      jobs.set(w, { id, r, rowId });
      active++;
      w.postMessage({ type: "task", id, task: { ...taskFor(study, r), stopFlag }, written: written.get(w) });
    };
    const crashed = (message: string): RealisationOutcome => ({
      status: "failed",
      failureKind: "exception",
      error: `worker crashed: ${message}`,
      wallSeconds: 0,
      simTimeReached: Number.NaN,
      scalars: {},
      series: {},
      events: [],
    });
    const spawn = (): Worker => {
      const w = new Worker(new URL("./worker.ts", import.meta.url).href, { type: "module" });
      const counter = new Int32Array(new SharedArrayBuffer(4));
      written.set(w, counter);
      w.onmessage = (ev: MessageEvent<WorkerMessage>) => {
        if (ended) return;
        const job = jobs.get(w);
        if (!job || job.id !== ev.data.id) return;
        try {
          if (ev.data.type === "frames") {
            // Stored even while stopping: a realisation that still finishes is stored whole.
            hooks.frames(job.rowId, ev.data.frames);
            Atomics.add(counter, 0, 1);
            Atomics.notify(counter, 0);
            return;
          }
          jobs.delete(w);
          active--;
          if (ev.data.type === "outcome") hooks.finish(job.r, job.rowId, ev.data.outcome);
          settle(w);
        } catch (e) {
          end(false, e);
        }
      };
      w.onerror = (ev: ErrorEvent) => {
        ev.preventDefault();
        if (ended) return;
        const job = jobs.get(w);
        w.terminate();
        const replacement = spawn();
        pool[pool.indexOf(w)] = replacement;
        try {
          if (job) {
            jobs.delete(w);
            active--;
            if (!stopping) hooks.finish(job.r, job.rowId, crashed(ev.message));
          }
          settle(replacement);
        } catch (e) {
          end(false, e);
        }
      };
      return w;
    };
    if (todo.length === 0) return end(false);
    const n = Math.max(1, Math.min(workers, todo.length));
    for (let i = 0; i < n; i++) pool.push(spawn());
    for (const w of [...pool]) dispatch(w);
  });
}
