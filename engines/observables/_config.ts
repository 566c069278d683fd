/** Validation of classification thresholds (shared by both classifiers). */
import type { ClassificationConfig } from "./contract.ts";

/**
 * Problems with a classification config, one readable message per bad field; empty when valid.
 *
 * @example
 * ```ts
 * checkClassificationConfig({ ...DEFAULT_CLASSIFICATION, stickyFrames: 0 });
 * // ["stickyFrames must be an integer ≥ 1, got 0"]
 * ```
 */
export function checkClassificationConfig(config: ClassificationConfig): string[] {
  const problems: string[] = [];
  const positive = (name: keyof ClassificationConfig) => {
    const v = config[name];
    if (typeof v !== "number" || !Number.isFinite(v) || v <= 0) {
      problems.push(`${name} must be a finite number > 0, got ${String(v)}`);
    }
  };
  positive("separationFactor");
  positive("radiusFactor");
  positive("speedTolerance");
  const k = config.stickyFrames;
  if (typeof k !== "number" || !Number.isInteger(k) || k < 1) {
    problems.push(`stickyFrames must be an integer ≥ 1, got ${String(k)}`);
  }
  const c = config.outwardCosine;
  if (typeof c !== "number" || !Number.isFinite(c) || c < -1 || c >= 1) {
    problems.push(`outwardCosine must be a number in [-1, 1), got ${String(c)}`);
  }
  return problems;
}

/** Throws a RangeError listing every problem of the config. */
export function assertClassificationConfig(config: ClassificationConfig): void {
  const problems = checkClassificationConfig(config);
  if (problems.length > 0) throw new RangeError(`invalid classification thresholds: ${problems.join("; ")}`);
}
