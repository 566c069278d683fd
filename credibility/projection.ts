/**
 * From a pilot's spread to the precision a study of N realisations would reach, and the N a target needs
 * (pure; `analysis/estimators/stein.ts` has the formulas): per-realisation quantities project with their
 * sample standard deviation s as t_{0.975, N−1}·s/√N; the diffusion coefficient, which is not a mean of
 * per-realisation values, with its bootstrap standard error × √n as s (a large-sample approximation).
 *
 * @example
 * ```ts
 * const p = projectSpread({ n: 8, mean: 2.5, sd: 1.2 }, { sizes: [8, 64], target: 0.1 });
 * p.curve;        // [{ N: 8, halfWidth: … }, { N: 64, halfWidth: … }]
 * p.recommended;  // N with t·s/√N ≤ 0.1 × 2.5
 * ```
 */
import { projectedHalfWidth, realisationsFor } from "../analysis/estimators/stein.ts";

/** The projection of one result. */
export interface Projection {
  /** Pilot size, mean and spread per realisation. */
  readonly n: number;
  readonly mean: number;
  readonly sd: number;
  /** Half-width of the 95 % interval at each N. */
  readonly curve: readonly { readonly N: number; readonly halfWidth: number }[];
  /** Relative target (half-width / |mean|). */
  readonly target: number;
  /** Smallest N reaching the target; null when it cannot be said (mean 0, no spread known). */
  readonly recommended: number | null;
  /** Why there is no recommendation, in plain words. */
  readonly note: string | null;
}

/** Realisation counts to show: the pilot's, doublings up to beyond the study's, and the study's own. */
export function projectionSizes(pilot: number, study: number): number[] {
  const out = new Set<number>([Math.max(2, pilot), study]);
  for (let N = Math.max(2, pilot) * 2; N <= Math.max(4 * study, 64); N *= 2) out.add(N);
  return [...out].filter((N) => N >= 2).sort((a, b) => a - b);
}

/** Projects a spread (see the module comment). */
export function projectSpread(
  s: { readonly n: number; readonly mean: number; readonly sd: number },
  opts: { readonly sizes: readonly number[]; readonly target: number },
): Projection {
  const curve = opts.sizes.map((N) => ({ N, halfWidth: projectedHalfWidth(s.sd, N) }));
  let recommended: number | null = null;
  let note: string | null = null;
  if (!(s.n >= 2) || !Number.isFinite(s.sd)) note = "fewer than 2 values: no spread to project from";
  else if (s.sd === 0) note = `every pilot realisation gave ${s.mean}: no spread to project`;
  else if (!(Math.abs(s.mean) > 0)) note = "the pilot's mean is 0: a relative precision is undefined";
  else {
    const N = realisationsFor(s.sd, opts.target * Math.abs(s.mean));
    recommended = Number.isFinite(N) ? N : null;
    if (recommended === null) note = "more than 10⁷ realisations";
  }
  return { n: s.n, mean: s.mean, sd: s.sd, curve, target: opts.target, recommended, note };
}
