/**
 * Radial density profiles of several realisations on one common set of bins.
 *
 * Each realisation's `cluster` observable fixes its own bin width w_i = R_rms,i(0)/10, so realisations differ.
 * The density is piecewise constant in each bin, so the content of a common bin [bh, (b+1)h) is exactly
 * Σ_k ρ_k·|μ-overlap of [kw, (k+1)w) and [bh, (b+1)h)| with the measure μ(r) = r^d (the factor π or 4π/3
 * cancels), and the common density is that content over μ((b+1)h) − μ(bh). Content is conserved.
 * Common width h = mean of the w_i; common bins K = ⌊min_i(K_i w_i)/h⌋ so every realisation covers them.
 *
 * References: methods notes §5.2 (bins ≈ R_rms(0)/10, densities per annulus area / shell volume).
 */

/** One realisation's stored profile: density of bin k at frame j is `values[k][j]`. */
export interface RealisationProfile {
  readonly binWidth: number;
  readonly values: readonly ArrayLike<number>[];
}

export interface CommonProfiles {
  readonly binWidth: number;
  readonly bins: number;
  /** Per realisation, density at index j·bins + b for the selected frames j. */
  readonly profiles: Float64Array[];
}

/**
 * Rebins every realisation onto common bins at the frames `frames` (column indices into `values[k]`).
 * Throws a RangeError when fewer than 2 common bins fit.
 */
export function commonProfiles(
  dimension: 2 | 3,
  realisations: readonly RealisationProfile[],
  frames: readonly number[],
): CommonProfiles {
  if (realisations.length === 0) throw new RangeError("no realisation has a radial profile");
  let sumW = 0;
  let reach = Infinity;
  for (const r of realisations) {
    if (!(r.binWidth > 0 && Number.isFinite(r.binWidth))) {
      throw new RangeError(`profile bin width must be positive, got ${r.binWidth}`);
    }
    sumW += r.binWidth;
    reach = Math.min(reach, r.values.length * r.binWidth);
  }
  const h = sumW / realisations.length;
  const K = Math.floor(reach / h + 1e-9);
  if (K < 2) throw new RangeError(`only ${K} common profile bin(s) fit every realisation (need ≥ 2)`);
  const J = frames.length;
  const mu = (r: number) => Math.pow(r, dimension);
  const profiles = realisations.map((real) => {
    const out = new Float64Array(J * K);
    const w = real.binWidth;
    for (let b = 0; b < K; b++) {
      const lo = b * h;
      const hi = (b + 1) * h;
      const kLo = Math.max(0, Math.floor(lo / w));
      const kHi = Math.min(real.values.length - 1, Math.floor(hi / w));
      const denom = mu(hi) - mu(lo);
      for (let j = 0; j < J; j++) {
        let content = 0;
        for (let k = kLo; k <= kHi; k++) {
          const a = Math.max(lo, k * w);
          const e = Math.min(hi, (k + 1) * w);
          if (e > a) content += real.values[k][frames[j]] * (mu(e) - mu(a));
        }
        out[j * K + b] = content / denom;
      }
    }
    return out;
  });
  return { binWidth: h, bins: K, profiles };
}
