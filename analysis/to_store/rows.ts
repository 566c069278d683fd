/**
 * What every row writer of `to_store/` shares: the per-point context, the row sink, the status vocabulary and
 * small helpers that turn estimator results into JSON-safe row fields.
 */
import type { DatabaseSync } from "node:sqlite";
import type { Dimension, EngineCapabilities } from "../../engines/contract.ts";
import type { ClassificationConfig } from "../../engines/observables/contract.ts";
import type { EnsembleResultInput } from "../../store/ensemble.ts";
import type { PointRecord, StudyRecord } from "../../store/reads.ts";
import type { EstimatorCI } from "../estimators/bootstrap.ts";

export { pickInterval } from "../estimators/bootstrap.ts";
import type { AnalyseOptions } from "../options.ts";

export type AnalysisStatus = "ok" | "no-diffusive-regime" | "rejected" | "not-available" | "error";

/** An estimate with its interval as shown to the user. */
export interface Estimate {
  readonly status: AnalysisStatus;
  readonly reason: string | null;
  readonly value: number | null;
  readonly lower: number | null;
  readonly upper: number | null;
}

/** Everything a row writer needs about one parameter point. */
export interface PointContext {
  readonly db: DatabaseSync;
  readonly study: StudyRecord;
  readonly point: PointRecord;
  readonly ids: readonly number[];
  readonly dimension: Dimension;
  readonly base: string;
  readonly B: number;
  readonly level: number;
  readonly capabilities: EngineCapabilities | null;
  readonly coreRadius: number | undefined;
  /** The circulation quantum κ in the study's units (1 in dimensionless units). */
  readonly kappa: number;
  readonly classification: ClassificationConfig | null;
  readonly opts: AnalyseOptions;
  readonly progress: (m: string) => void;
}

/** Adds one row of the point being analysed. */
export type Push = (analysis: string, name: string, e: Partial<EnsembleResultInput>) => void;

export function missing(status: AnalysisStatus, reason: string): Estimate {
  return { status, reason, value: null, lower: null, upper: null };
}

export function ciDetail(ci: EstimatorCI | null): Record<string, unknown> {
  return {
    percentile: ci?.percentile ? { lower: ci.percentile.lower, upper: ci.percentile.upper } : null,
    bca: ci?.bca ? { lower: ci.bca.lower, upper: ci.bca.upper } : null,
    bcaNote: ci?.bcaNote ?? null,
    standardError: ci?.standardError ?? null,
  };
}
