/** The options of `analyseStudy` and their checks (bad values are refused with one-line messages). */
import { AnalysisInputError } from "./errors.ts";
import type { VinenLoss } from "./estimators/vinen_fit.ts";

/** Where the χ₂ of the Vinen fit came from (stored with the `vinen` rows and shown in the report). */
export type Chi2Source =
  | { readonly kind: "given"; readonly note: string }
  | {
    readonly kind: "decay-study";
    /** Path of the decay study's database, as given. */
    readonly path: string;
    readonly studyName: string;
    readonly studyHash: string;
    readonly chi2: number;
    readonly interval: readonly [number, number] | null;
    readonly realisations: number;
    /** Start of the late-time part of 1/L(t) that was fitted. */
    readonly fromTime: number;
    readonly series: string;
  };

export interface AnalyseOptions {
  /** Study revision; default the latest. */
  readonly studyId?: number;
  /** Base of the bootstrap seed strings; default the study hash. */
  readonly seed?: string;
  /** Bootstrap replicates of the MSD and RMS-radius fits (default 2000). */
  readonly replicates?: number;
  /** Interval level (default 0.95). */
  readonly level?: number;
  /**
   * The loss term of the Vinen fit: fitted freely (default), with a decay study's χ₂ as a Gaussian prior, or
   * fixed at a given χ₂ (a hypothesis the fit can reject).
   */
  readonly vinenLoss?: VinenLoss;
  /** Where a prior or fixed χ₂ came from (recorded in the rows). */
  readonly chi2Source?: Chi2Source;
  /** Bootstrap replicates of the Vinen fit (default 200: each replicate is a full PDE fit). */
  readonly vinenReplicates?: number;
  /** Threshold-sensitivity table by replaying stored frames (default true). */
  readonly sensitivity?: boolean;
  /** Bootstrap replicates of each sensitivity row (default 200). */
  readonly sensitivityReplicates?: number;
  /** Velocity correlations where the engine provides a velocity field (default true). */
  readonly correlations?: boolean;
  /** The Vinen-equation fit (default true; false stores a "not requested" row). */
  readonly vinen?: boolean;
  /**
   * Store the rows in `ensemble_results` (default true). False computes them only and returns them in the
   * summary's `rows` (a provisional look at an unfinished run, which cannot take the writer lock).
   */
  readonly store?: boolean;
  /** Points analysed in parallel (module workers; default: the number of cores, at most the points). */
  readonly workers?: number;
  /** Progress messages (one line each). */
  readonly onProgress?: (message: string) => void;
}

export function checkOptions(o: AnalyseOptions): void {
  const intAtLeast = (name: string, v: number | undefined, min: number, allowZero = false) => {
    if (v === undefined) return;
    if (!Number.isInteger(v) || (v < min && !(allowZero && v === 0))) {
      throw new AnalysisInputError(
        `${name} must be ${allowZero ? "0 or " : ""}an integer ≥ ${min}, got ${v}`,
      );
    }
  };
  intAtLeast("replicates", o.replicates, 2, true);
  intAtLeast("vinenReplicates", o.vinenReplicates, 2, true);
  intAtLeast("sensitivityReplicates", o.sensitivityReplicates, 2, true);
  intAtLeast("workers", o.workers, 1);
  if (o.level !== undefined && !(o.level > 0 && o.level < 1)) {
    throw new AnalysisInputError(`level must be in (0, 1), got ${o.level}`);
  }
  const loss = o.vinenLoss;
  if (loss && loss.mode !== "free" && !(loss.chi2 >= 0 && Number.isFinite(loss.chi2))) {
    throw new AnalysisInputError(`chi2 must be a finite number ≥ 0, got ${loss.chi2}`);
  }
  if (loss?.mode === "prior" && !(loss.sigma > 0 && Number.isFinite(loss.sigma))) {
    throw new AnalysisInputError(`the χ₂ prior's standard deviation must be positive, got ${loss.sigma}`);
  }
  if (o.seed !== undefined && o.seed.length === 0) throw new AnalysisInputError("seed must not be empty");
}
