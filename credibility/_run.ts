/** What the credibility commands pass on to the runner unchanged (`study/runner.ts`, `RunOptions`). */
import type { Progress } from "../study/progress.ts";
import type { Provenance, RunOptions } from "../study/runner.ts";

/** Where and how realisations are run and stored, as the caller gives it. */
export interface RunContext {
  readonly dbPath: string;
  readonly workers: number;
  readonly progress: Progress;
  readonly provenance: Provenance;
  readonly signal?: AbortSignal;
  readonly onNote?: (line: string) => void;
  readonly allowOtherStudy?: boolean;
}

/** The runner options of a run context. */
export function runContext(c: RunContext): Pick<RunOptions, keyof RunContext> {
  return {
    dbPath: c.dbPath,
    workers: c.workers,
    progress: c.progress,
    provenance: c.provenance,
    signal: c.signal,
    onNote: c.onNote,
    allowOtherStudy: c.allowOtherStudy,
  };
}
