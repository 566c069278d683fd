/**
 * The command-line side of planning and auditing a study: `spindrift pilot`, `spindrift audit` and
 * `spindrift run --until`. Thin: parse option values, call `credibility/`, print, map outcomes to exit codes.
 */
import type { NormalizedStudy } from "../study/normalize.ts";
import { createProgress } from "../study/progress.ts";
import { formatPilot, runPilot } from "../credibility/pilot.ts";
import { formatSequential, parseUntil, runUntilPrecise } from "../credibility/sequential.ts";
import { AuditError, type AuditOptions, formatAudit, runAudit } from "../credibility/audit.ts";
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
  if (Math.min(o.realisations ?? 8, study.realisations) < 2) {
    throw new UserError(
      `a pilot needs at least 2 realisations per point; the study has ${study.realisations}`,
      "raise realisations in the study file (the pilot runs the study's first ones)",
    );
  }
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

export interface UntilCommandOptions {
  readonly dbPath: string;
  readonly workers: number;
  readonly until: string;
  readonly cap?: number;
  readonly batch?: number;
  readonly fresh: boolean;
  readonly keepFailed: boolean;
  readonly quiet: boolean;
  readonly allowOtherStudy?: boolean;
  readonly force?: boolean;
}

/** `run --until`: Stein's two-stage run with Ctrl-C handling; returns the exit status. */
export async function untilCommand(
  study: NormalizedStudy,
  o: UntilCommandOptions,
  out: (line: string) => void,
): Promise<number> {
  let until;
  try {
    until = parseUntil(o.until);
  } catch (e) {
    throw new UserError((e as Error).message);
  }
  if (study.realisations < 2) {
    throw new UserError(
      `--until needs a first stage of at least 2 realisations per point; the study has ${study.realisations}`,
      "set realisations (the first stage) to 10 or more in the study file",
    );
  }
  if (o.cap !== undefined && o.cap < study.realisations) {
    throw new UserError(
      `--max-realisations ${o.cap} is below the study's ${study.realisations} realisations (the first stage)`,
    );
  }
  const { value, stoppedBy } = await withStopSignals((signal) =>
    runUntilPrecise(study, until, {
      dbPath: o.dbPath,
      workers: o.workers,
      cap: o.cap,
      batch: o.batch,
      fresh: o.fresh,
      keepFailed: o.keepFailed,
      allowOtherStudy: o.allowOtherStudy,
      force: o.force,
      progress: createProgress({ quiet: o.quiet }),
      provenance: provenance(),
      signal,
      onNote: (line) => console.error(`spindrift: ${line}`),
      onBatch: (line) => console.error(line),
    })
  );
  if (value.interrupted) {
    out(
      "interrupted: finished realisations are stored; run the same command again to resume (the first stage " +
        "decides the same total)",
    );
    return SIGNAL_EXIT[stoppedBy ?? "SIGINT"];
  }
  for (const line of formatSequential(value)) out(line);
  out(`database: ${o.dbPath}`);
  out(`next: spindrift analyse ${o.dbPath}`);
  const failed = value.stage1.failed + (value.stage2?.failed ?? 0);
  return failed > 0 ? 1 : 0;
}

/** The command line's audit options: the library's, with the pass as one word and the study revision. */
export type AuditCommandOptions =
  & Pick<AuditOptions, "subset" | "budget" | "minPairs" | "accept" | "auditDb" | "workers">
  & { readonly pass: "numerics" | "physics" | "both"; readonly study?: number; readonly quiet: boolean };

/** `spindrift audit`: reruns with refined numerics (and/or varied physics), compares, stores; exit status. */
export async function auditCommand(
  dbPath: string,
  o: AuditCommandOptions,
  out: (line: string) => void,
): Promise<number> {
  if (/\.ya?ml$/i.test(dbPath)) {
    throw new UserError(
      `${dbPath} is a study file; the audit reruns part of a finished study from its database`,
      "give the database, e.g. spindrift audit my-study.sqlite (run the study first)",
    );
  }
  const passes = o.pass === "both" ? ["numerics", "physics"] as const : [o.pass];
  try {
    const { value, stoppedBy } = await withStopSignals((signal) =>
      runAudit(dbPath, {
        studyId: o.study,
        passes,
        subset: o.subset,
        budget: o.budget,
        minPairs: o.minPairs,
        accept: o.accept,
        auditDb: o.auditDb,
        workers: o.workers,
        provenance: provenance(),
        progress: createProgress({ quiet: o.quiet }),
        signal,
        onNote: (line) => console.error(`spindrift: ${line}`),
      })
    );
    if (value.interrupted) {
      out("interrupted: finished audit realisations are stored; run the same command again to resume");
      return SIGNAL_EXIT[stoppedBy ?? "SIGINT"];
    }
    for (const line of formatAudit(value)) out(line);
    out(
      `stored in ensemble_results (analysis 'audit') of ${dbPath}; the report shows it under "Numerical credibility"`,
    );
    return 0;
  } catch (e) {
    if (e instanceof AuditError) throw new UserError(e.message, e.hint);
    throw e;
  }
}
