/**
 * Evaporation and losses of an ensemble, with bootstrap intervals over realisations.
 *
 * Definitions (per parameter point; times are lags since each realisation's first frame):
 * - N_ev(t): ensemble mean over realisations of the cumulative evaporated count (2D: vortices, two per dipole;
 *   3D: loops), the `evaporated_count` series of the evaporation observable.
 * - `evaporated` = N_ev(t_end), the mean number of objects evaporated by the end of the run.
 * - `tHalf` = t½, the first time N_ev reaches N_ev(t_end)/2, linearly interpolated between samples (undefined
 *   when nothing evaporates).
 * - `rate` = N_ev(t_end)/(2 t½): the mean evaporation rate while the first half of the evaporating objects
 *   leaves (objects per unit time; 0 when nothing evaporates). Evaporation is front-loaded (the cloud thins),
 *   so this "half-life rate" describes the active phase rather than the whole run.
 * - `lostFraction` = 1 − Σ_i M_i(t_end) / Σ_i M_i(0), with M the vortex count (2D; vortices lost by
 *   annihilation) or the total line length (3D; length lost to friction, reconnection cusps and removed loops).
 *
 * Intervals: nonparametric bootstrap over realisations (the independent units), BCa where defined, else
 * percentile, through `bootstrap` of `bootstrap.ts` with recorded seeds.
 *
 * References: B. Efron, R.J. Tibshirani, An Introduction to the Bootstrap (1993), doi:10.1201/9780429246593;
 * B. Efron, J. Am. Stat. Assoc. 82, 171 (1987), doi:10.1080/01621459.1987.10478410 (BCa).
 *
 * @example
 * ```ts
 * const e = evaporationSummary(
 *   { t: [0, 1, 2], evaporated: [[0, 2, 4], [0, 4, 4]] },
 *   { seed: "demo", replicates: 500 },
 * );
 * e.evaporated.value; // 4
 * ```
 */
import { bootstrap, type Interval } from "./bootstrap.ts";

export interface EvaporationInput {
  /** Common times (lags since the first frame), increasing. */
  readonly t: ArrayLike<number>;
  /** Cumulative evaporated count per realisation at `t` (NaN where missing). */
  readonly evaporated: readonly ArrayLike<number>[];
  /** Optional vortex count (2D) or line length (3D) per realisation at `t`, for the lost fraction. */
  readonly amount?: readonly ArrayLike<number>[];
}

export interface EvaporationOptions {
  /** Seed base of the bootstrap streams (one stream per quantity: `<seed>/<name>`). */
  readonly seed: string;
  /** Bootstrap replicates (default 2000; 0 = no intervals). */
  readonly replicates?: number;
  /** Interval level (default 0.95). */
  readonly level?: number;
}

/** One estimate with its interval (null when undefined or not bootstrapped). */
export interface EvaporationEstimate {
  readonly value: number | null;
  readonly interval: Interval | null;
  readonly method: "bca" | "percentile" | null;
}

export interface EvaporationSummary {
  readonly realisations: number;
  readonly tEnd: number;
  readonly evaporated: EvaporationEstimate;
  readonly tHalf: EvaporationEstimate;
  readonly rate: EvaporationEstimate;
  readonly lostFraction: EvaporationEstimate | null;
  /** The ensemble-mean curve N_ev(t) (for charts and checks). */
  readonly mean: Float64Array;
}

/** Ensemble mean over the realisations `idx` at each time (NaN values skipped; NaN where none). */
function meanCurve(rows: readonly ArrayLike<number>[], idx: ArrayLike<number>, K: number, out: Float64Array) {
  for (let k = 0; k < K; k++) {
    let s = 0, c = 0;
    for (let q = 0; q < idx.length; q++) {
      const v = rows[idx[q]][k];
      if (Number.isFinite(v)) {
        s += v;
        c++;
      }
    }
    out[k] = c > 0 ? s / c : Number.NaN;
  }
  return out;
}

/** Last index with a finite value, or −1. */
function lastFinite(a: ArrayLike<number>): number {
  for (let k = a.length - 1; k >= 0; k--) if (Number.isFinite(a[k])) return k;
  return -1;
}

/** t½ of a cumulative curve: first time it reaches half its final value (linear interpolation); NaN if final ≤ 0. */
export function halfTime(t: ArrayLike<number>, curve: ArrayLike<number>): number {
  const end = lastFinite(curve);
  if (end < 0 || !(curve[end] > 0)) return Number.NaN;
  const half = curve[end] / 2;
  let prev = -1;
  for (let k = 0; k <= end; k++) {
    const v = curve[k];
    if (!Number.isFinite(v)) continue;
    if (v >= half) {
      if (prev < 0 || v === curve[prev]) return t[k];
      return t[prev] + ((half - curve[prev]) / (v - curve[prev])) * (t[k] - t[prev]);
    }
    prev = k;
  }
  return Number.NaN;
}

/** Evaporated count, t½, half-life rate and lost fraction of an ensemble (see the module comment). */
export function evaporationSummary(input: EvaporationInput, options: EvaporationOptions): EvaporationSummary {
  const R = input.evaporated.length;
  const K = input.t.length;
  if (R === 0) throw new RangeError("evaporationSummary needs at least one realisation");
  for (const row of [...input.evaporated, ...(input.amount ?? [])]) {
    if (row.length !== K) {
      throw new RangeError(`every series needs ${K} values (one per time), got ${row.length}`);
    }
  }
  const B = options.replicates ?? 2000;
  const level = options.level ?? 0.95;
  const curve = new Float64Array(K);

  const evaporatedOf = (idx: ArrayLike<number>) => {
    meanCurve(input.evaporated, idx, K, curve);
    const end = lastFinite(curve);
    return end < 0 ? Number.NaN : curve[end];
  };
  const tHalfOf = (idx: ArrayLike<number>) => halfTime(input.t, meanCurve(input.evaporated, idx, K, curve));
  const rateOf = (idx: ArrayLike<number>) => {
    const n = evaporatedOf(idx);
    if (n === 0) return 0;
    const th = halfTime(input.t, curve);
    return th > 0 ? n / (2 * th) : Number.NaN;
  };
  const lostOf = (idx: ArrayLike<number>) => {
    const rows = input.amount!;
    // Ratio of sums over realisations (each realisation's first and last available amounts).
    let first = 0, last = 0;
    for (let q = 0; q < idx.length; q++) {
      const row = rows[idx[q]];
      let a = -1;
      for (let k = 0; k < K && a < 0; k++) if (Number.isFinite(row[k])) a = k;
      const b = lastFinite(row);
      if (a < 0) continue;
      first += row[a];
      last += row[b];
    }
    return first > 0 ? 1 - last / first : Number.NaN;
  };

  const all = Int32Array.from({ length: R }, (_, i) => i);
  const estimate = (name: string, statistic: (idx: Int32Array) => number): EvaporationEstimate => {
    const value = statistic(all);
    if (!Number.isFinite(value)) return { value: null, interval: null, method: null };
    if (B === 0 || R < 2) return { value, interval: null, method: null };
    const r = bootstrap(R, statistic, { seed: `${options.seed}/${name}`, replicates: B, level });
    if (r.bca) return { value, interval: r.bca, method: "bca" };
    return { value, interval: r.percentile, method: r.percentile ? "percentile" : null };
  };

  const evaporated = estimate("evaporated", evaporatedOf);
  const tHalf = estimate("t_half", tHalfOf);
  const rate = estimate("rate", rateOf);
  const lostFraction = input.amount ? estimate("lost_fraction", lostOf) : null;
  meanCurve(input.evaporated, all, K, curve);
  return {
    realisations: R,
    tEnd: K > 0 ? input.t[K - 1] : Number.NaN,
    evaporated,
    tHalf,
    rate,
    lostFraction,
    mean: curve.slice(),
  };
}
