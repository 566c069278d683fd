/**
 * Exact chi-square confidence interval for a diffusion coefficient estimated from independent Brownian
 * increments.
 *
 * Method: with n independent increments Δr over a time step Δt in d dimensions, each Cartesian component is
 * normal with variance 2DΔt, so D̂ = Σ|Δr|²/(2dnΔt) satisfies dnD̂/D ~ χ²_{dn}. Inverting the two tail
 * quantiles gives the exact interval [dnD̂/χ²_{dn,1−α/2}, dnD̂/χ²_{dn,α/2}].
 *
 * References: A. Einstein, Ann. Phys. 17, 549 (1905), doi:10.1002/andp.19053220806 (⟨Δx²⟩ = 2DΔt);
 * M. Abramowitz, I.A. Stegun, Handbook of Mathematical Functions (1964), §26.4 (chi-square distribution);
 * X. Michalet, Phys. Rev. E 82, 041914 (2010), doi:10.1103/PhysRevE.82.041914.
 *
 * @example
 * ```ts
 * import { chiSquareDiffusionInterval } from "./chi2.ts";
 * const ci = chiSquareDiffusionInterval([0.41, 0.12, 0.33, 0.25], { dimension: 2, dt: 0.1 });
 * console.log(ci.D, ci.lower, ci.upper);
 * ```
 */
import { chiSquareQuantile } from "./_jstat.ts";

export interface ChiSquareDiffusionOptions {
  /** Space dimension d of the displacements (1, 2 or 3). */
  readonly dimension: 1 | 2 | 3;
  /** Time step Δt of every increment (> 0). */
  readonly dt: number;
  /** Interval level (default 0.95). */
  readonly level?: number;
}

export interface ChiSquareDiffusionInterval {
  /** D̂ = Σ|Δr|²/(2dnΔt). */
  readonly D: number;
  readonly lower: number;
  readonly upper: number;
  /** Degrees of freedom dn. */
  readonly dof: number;
  readonly level: number;
}

/**
 * Estimate and exact interval for D from squared displacements |Δr_i|² of n independent increments.
 */
export function chiSquareDiffusionInterval(
  squaredDisplacements: ArrayLike<number>,
  options: ChiSquareDiffusionOptions,
): ChiSquareDiffusionInterval {
  const { dimension: d, dt } = options;
  const level = options.level ?? 0.95;
  if (d !== 1 && d !== 2 && d !== 3) throw new RangeError(`dimension must be 1, 2 or 3, got ${d}`);
  if (!(dt > 0 && Number.isFinite(dt))) {
    throw new RangeError(`dt must be a positive finite number, got ${dt}`);
  }
  if (!(level > 0 && level < 1)) throw new RangeError(`level must be in (0, 1), got ${level}`);
  const n = squaredDisplacements.length;
  if (n === 0) throw new RangeError("need at least one increment");
  // Neumaier-compensated sum: n may be large.
  let sum = 0;
  let c = 0;
  for (let i = 0; i < n; i++) {
    const v = squaredDisplacements[i];
    if (!(v >= 0 && Number.isFinite(v))) {
      throw new RangeError(`squared displacement ${i} must be finite and ≥ 0, got ${v}`);
    }
    const t = sum + v;
    c += Math.abs(sum) >= Math.abs(v) ? (sum - t) + v : (v - t) + sum;
    sum = t;
  }
  sum += c;
  const dof = d * n;
  const D = sum / (2 * dof * dt);
  const alpha = 1 - level;
  return {
    D,
    lower: (dof * D) / chiSquareQuantile(1 - alpha / 2, dof),
    upper: (dof * D) / chiSquareQuantile(alpha / 2, dof),
    dof,
    level,
  };
}
