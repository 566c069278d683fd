/**
 * Ctrl-C and SIGTERM for commands that compute: the first signal asks the work to stop (an AbortSignal the
 * worker pool turns into the engines' stop flag), a second one ends the process at once. Exit status is
 * 128 + the signal number: 130 for SIGINT, 143 for SIGTERM, as shells and batch systems expect.
 *
 * Ending at once is safe for the data: every transaction is synchronous on the main thread, so a signal is
 * handled between transactions; the writer lock file is removed before exiting.
 *
 * @example
 * ```ts
 * const { value, stoppedBy } = await withStopSignals((signal) => runStudy(study, { ...opts, signal }));
 * if (stoppedBy) Deno.exitCode = SIGNAL_EXIT[stoppedBy];
 * ```
 */
import { releaseHeldLocks } from "../store/lock.ts";

export type StopSignal = "SIGINT" | "SIGTERM";

/** Exit status after a stop by each signal. */
export const SIGNAL_EXIT: Readonly<Record<StopSignal, number>> = { SIGINT: 130, SIGTERM: 143 };

/** True for the exit statuses of `SIGNAL_EXIT`. */
export function isSignalExit(code: number): boolean {
  return Object.values(SIGNAL_EXIT).includes(code);
}

/** Runs `work` with SIGINT/SIGTERM turned into an abort (first signal) and an immediate exit (second). */
export async function withStopSignals<T>(
  work: (signal: AbortSignal) => Promise<T>,
  opts: { readonly stopping?: string } = {},
): Promise<{ value: T; stoppedBy: StopSignal | null }> {
  const controller = new AbortController();
  let stoppedBy: StopSignal | null = null;
  const listeners = (["SIGINT", "SIGTERM"] as const).map((sig) => {
    const listener = () => {
      if (stoppedBy !== null) {
        console.error("\nstopping now; finished realisations are kept");
        releaseHeldLocks();
        Deno.exit(SIGNAL_EXIT[sig]);
      }
      stoppedBy = sig;
      console.error(
        `\n${
          opts.stopping ??
            "stopping: realisations in progress end within a few seconds and are left for the " +
              "next run; finished ones are kept"
        } (${sig === "SIGINT" ? "Ctrl-C" : sig} again stops at once)`,
      );
      controller.abort();
    };
    Deno.addSignalListener(sig, listener);
    return [sig, listener] as const;
  });
  try {
    const value = await work(controller.signal);
    return { value, stoppedBy };
  } finally {
    for (const [sig, listener] of listeners) Deno.removeSignalListener(sig, listener);
  }
}
