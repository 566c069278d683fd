/**
 * Radial density profiles of several realisations on one common set of bins.
 *
 * Each realisation's `cluster` observable fixes its own bin width w_i = R_rms,i(0)/10, so realisations differ.
 * The density is piecewise constant in each bin, so the content of a common bin [bh, (b+1)h) is exactly
 * Σ_k ρ_k·|μ-overlap of [kw, (k+1)w) and [bh, (b+1)h)| with the measure μ(r) = r^d (the factor π or 4π/3
 * cancels), and the common density is that content over μ((b+1)h) − μ(bh). Content is conserved.
 * Common width h = mean of the w_i; common bins K = ⌊min_i(K_i w_i)/h⌋ so every realisation covers them.
 *
 * `readProfileEnsemble` reads the stored `profile.<k>` series of a point (scalars `profile_bin_width`,
 * `profile_bins`) at up to `maxTimes` frames of a time window and rebins them.
 *
 * References: docs/methods.md §5.2 (bins ≈ R_rms(0)/10, densities per annulus area / shell volume).
 */
import type { DatabaseSync } from "node:sqlite";
import { readAlignedSeries, readScalars } from "../../store/reads.ts";
import type { ProfileEnsemble } from "../estimators/vinen.ts";
import { alignTo } from "./series.ts";

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

/**
 * The radial profiles of realisations `ids` on common bins at up to `maxTimes` frames (evenly spread) of the
 * window [t1, t2] of lags since the first frame (the whole run without a window), or the reason there are none.
 */
export function readProfileEnsemble(
  db: DatabaseSync,
  ids: readonly number[],
  opts: {
    readonly dimension: 2 | 3;
    readonly window: { readonly t1: number; readonly t2: number } | null;
    readonly maxTimes: number;
  },
): { readonly data: ProfileEnsemble; readonly used: number } | { readonly reason: string } {
  if (ids.length === 0) return { reason: "no done realisation at this point" };
  const scalars = readScalars(db, ids);
  const widths = ids.map((id) => scalars.get(id)?.profile_bin_width ?? Number.NaN);
  const binsOf = ids.map((id) => scalars.get(id)?.profile_bins ?? Number.NaN);
  if (!widths.every((w) => w > 0) || !binsOf.every((b) => b >= 2)) {
    return {
      reason:
        "radial profiles were not recorded by every done realisation (add cluster to observables.record)",
    };
  }
  const maxBins = Math.max(...binsOf);
  const series = Array.from({ length: maxBins }, (_, k) => readAlignedSeries(db, ids, `profile.${k}`));
  const axis = series[0];
  if (axis.k.length < 2) return { reason: "fewer than 2 frames carry a radial profile" };
  const cols = series.map((s) => alignTo(s, axis.k, Number.NaN)!);
  const lags = Array.from(axis.t, (x) => x - axis.t[0]);
  const t1 = opts.window?.t1 ?? lags[0];
  const t2 = opts.window?.t2 ?? lags[lags.length - 1];
  let sel: number[] = [];
  for (let j = 0; j < lags.length; j++) if (lags[j] >= t1 - 1e-12 && lags[j] <= t2 + 1e-12) sel.push(j);
  if (sel.length > opts.maxTimes) {
    const m = sel.length;
    sel = Array.from(
      { length: opts.maxTimes },
      (_, q) => sel[Math.round((q * (m - 1)) / (opts.maxTimes - 1))],
    );
  }
  if (sel.length < 2) return { reason: `fewer than 2 profile frames in [${t1}, ${t2}]` };
  // Realisations with a complete profile at every selected frame.
  const usable: number[] = [];
  ids.forEach((_, i) => {
    let ok = true;
    for (let k = 0; k < binsOf[i] && ok; k++) {
      for (const j of sel) if (!Number.isFinite(cols[k][i][j])) ok = false;
    }
    if (ok) usable.push(i);
  });
  if (usable.length === 0) return { reason: "no realisation has complete profiles in the window" };
  const common = commonProfiles(
    opts.dimension,
    usable.map((i) => ({
      binWidth: widths[i],
      values: Array.from({ length: binsOf[i] }, (_, k) => cols[k][i]),
    })),
    sel,
  );
  return {
    data: {
      dimension: opts.dimension,
      binWidth: common.binWidth,
      bins: common.bins,
      t: sel.map((j) => lags[j]),
      profiles: common.profiles,
    },
    used: usable.length,
  };
}
