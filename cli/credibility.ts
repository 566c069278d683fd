/**
 * The command-line side of planning and auditing a study: `spindrift pilot`, `spindrift audit` and
 * `spindrift run --until`. Thin: parse option values, call `credibility/`, print, map outcomes to exit codes.
 */
import type { NormalizedStudy } from "../study/normalize.ts";
import { createProgress } from "../study/progress.ts";
import { formatPilot, runPilot } from "../credibility/pilot.ts";
import { provenance } from "./provenance.ts";
import { SIGNAL_EXIT, withStopSignals } from "./signals.ts";
import { UserError } from "./errors.ts";

/** "10%" → 0.1, "0.05" → 0.05 (a fraction); throws a UserError naming the flag otherwise. */
export function parseFraction(flag: string): (v: string) => number {
  return (v: string): number => {
    const s = v.trim();
    const x = s.endsWith("%") ? Number(s.slice(0, -1)) / 100 : Number(s);
    if (s === "" || !Number.isFinite(x) || !(x > 0)) {
      throw new UserError(`${flag} must be a positive fraction such as 10% or 0.1, got '${v}'`);
    }
    return x;
  };
}

export interface PilotCommandOptions {
  readonly dbPath: string;
  readonly workers: number;
  readonly realisations?: number;
  readonly target?: number;
  readonly allowOtherStudy?: boolean;
  readonly quiet?: boolean;
}

/** Runs the pilot with Ctrl-C handling; returns the exit status. */
export async function pilotCommand(
  study: NormalizedStudy,
  o: PilotCommandOptions,
  out: (line: string) => void,
): Promise<number> {
  const { value, stoppedBy } = await withStopSignals((signal) =>
    runPilot(study, {
      dbPath: o.dbPath,
      workers: o.workers,
      realisations: o.realisations,
      target: o.target,
      allowOtherStudy: o.allowOtherStudy,
      progress: createProgress({ quiet: o.quiet }),
      provenance: provenance(),
      signal,
      onNote: (line) => console.error(`spindrift: ${line}`),
    })
  );
  if (value.interrupted) {
    out(
      `interrupted: ${value.done} pilot realisation(s) finished and stored; run the same command to resume`,
    );
    return SIGNAL_EXIT[stoppedBy ?? "SIGINT"];
  }
  for (const line of formatPilot(value.estimate)) out(line);
  out(`stored in ensemble_results (analysis 'pilot') of ${o.dbPath}; 'spindrift check' shows it again`);
  return value.estimate.points.some((p) => p.failed > 0) ? 1 : 0;
}
