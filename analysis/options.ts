/** The options of `analyseStudy` and their checks (bad values are refused with one-line messages). */
import { AnalysisInputError } from "./errors.ts";

export interface AnalyseOptions {
  /** Study revision; default the latest. */
  readonly studyId?: number;
  /** Base of the bootstrap seed strings; default the study hash. */
  readonly seed?: string;
  /** Bootstrap replicates of the MSD and RMS-radius fits (default 2000). */
  readonly replicates?: number;
  /** Interval level (default 0.95). */
  readonly level?: number;
  /** χ₂ of the Vinen equation (from a homogeneous decay study); without it the Vinen fit is not available. */
  readonly chi2?: number;
  /** χ₂ range for the sensitivity of the Vinen D (default [χ₂/2, 2χ₂]). */
  readonly chi2Interval?: readonly [number, number];
  /** Bootstrap replicates of the Vinen fit (default 200: each replicate is a full PDE fit). */
  readonly vinenReplicates?: number;
  /** Threshold-sensitivity table by replaying stored frames (default true). */
  readonly sensitivity?: boolean;
  /** Bootstrap replicates of each sensitivity row (default 200). */
  readonly sensitivityReplicates?: number;
  /** Velocity correlations where the engine provides a velocity field (default true). */
  readonly correlations?: boolean;
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
  if (o.level !== undefined && !(o.level > 0 && o.level < 1)) {
    throw new AnalysisInputError(`level must be in (0, 1), got ${o.level}`);
  }
  if (o.chi2 !== undefined && !(o.chi2 >= 0 && Number.isFinite(o.chi2))) {
    throw new AnalysisInputError(`chi2 must be a finite number ≥ 0, got ${o.chi2}`);
  }
  if (o.chi2Interval !== undefined) {
    const [lo, hi] = o.chi2Interval;
    if (!(lo >= 0 && hi > lo && Number.isFinite(hi))) {
      throw new AnalysisInputError(`the χ₂ range must satisfy 0 ≤ low < high, got [${lo}, ${hi}]`);
    }
  }
  if (o.seed !== undefined && o.seed.length === 0) throw new AnalysisInputError("seed must not be empty");
}
