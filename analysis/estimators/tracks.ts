/**
 * Object tracks of an ensemble and the per-realisation sums every loss-aware diffusion estimator is built
 * from. Each estimator is a ratio Σ_i A_i / Σ_i W_i over realisations i, so a bootstrap replicate (or any
 * subset of realisations) costs one pass over these sums, never a pass over the tracks.
 *
 * Pairwise relative displacements. For a set of objects with displacements a_j over some interval, grouped into
 * independent units g (vortices in 2D: every vortex its own group; 3D: the markers of one loop move together),
 *   C = Σ over pairs (i, j) in different groups of |a_i − a_j|²,   P = number of such pairs,
 * and C/(2P) has expectation 2dDΔt for independent units diffusing with D, whatever their common drift (the
 * cluster's centre motion cancels in a_i − a_j) and however the markers of one unit are correlated. With
 * A = C/N and W = 2P/N (N objects in the set) the pooled ratio ΣA/ΣW weights every object once; for 2D
 * (singleton groups) A = Σ|a − ā|² and W = N − 1, the pooled unbiased variance, i.e. the centroid-corrected
 * MSD divided by (1 − 1/N). For groups, W = N(1 − 1/N_eff) with N_eff = N²/Σ N_g² (the number of loops for
 * loops of equal marker counts). Positions instead of displacements give the spread R² = ⟨|r_i − r_j|²⟩/2 of
 * the same set (2dDt + const for independent diffusers).
 *
 * Sets (docs/methods.md §5.1 and §5.3):
 * - origin (survivor average from t₀): objects main at t₀ and at t, present at every frame in between;
 *   displacements r(t) − r(t₀); groups as at t₀.
 * - cohort of a window [t₁, t₂]: objects main at every frame of the window; displacements r(t) − r(t₁) and
 *   positions at t for t in the window; groups as at t₁.
 * - lag increments: for every start frame s and lag L (log-spaced, 20 per decade), objects main at s and at
 *   s + L and present in between; displacements r(s + L) − r(s); groups as at s. Needs equally spaced frames.
 * An object that is absent from a frame is censored there: it counts again only in sets that begin after it
 * reappears (stored tracks do not reappear; imported ones may).
 *
 * References: A. Einstein, Ann. Phys. 17, 549 (1905), doi:10.1002/andp.19053220806 (MSD = 2dDt);
 * H. Qian, M.P. Sheetz, E.L. Elson, Biophys. J. 60, 910 (1991), doi:10.1016/S0006-3495(91)82125-7 (lag
 * increments from many start times); E.L. Kaplan, P. Meier, J. Am. Stat. Assoc. 53, 457 (1958),
 * doi:10.1080/01621459.1958.10501452 (censoring); the identity Σ_{i<j}|a_i − a_j|² = NΣ|a_i − ā|² is
 * elementary (common practice, no source).
 *
 * @example
 * ```ts
 * import { prepareTracks } from "./tracks.ts";
 * const prep = prepareTracks({ dimension: 2, t: [0, 1, 2], realisations: [{
 *   objects: 2, x: Float64Array.of(0, 1, 0, 2, 0, 3), y: new Float64Array(6), z: null,
 *   main: new Uint8Array(6).fill(1), group: null,
 * }] });
 * const { A, W } = prep.origin[0];
 * A[2] / W[2]; // 2: per-object MSD of two objects whose relative displacement is 2 at t = 2
 * ```
 */

/** Tracks of one realisation on the ensemble's common frames (frame-major: index k·M + j). */
export interface RealisationTracks {
  /** Number of tracked objects M (columns). */
  readonly objects: number;
  /** Positions; NaN where object j is absent from frame k. */
  readonly x: Float64Array;
  readonly y: Float64Array;
  /** Present iff the ensemble is 3D. */
  readonly z: Float64Array | null;
  /** 1 where object j is present and labelled main-cluster at frame k. */
  readonly main: Uint8Array;
  /** Independent unit of object j at frame k (e.g. its loop); null: every object is its own unit. */
  readonly group: Int32Array | null;
}

export interface TrackEnsemble {
  readonly dimension: 2 | 3;
  /** Common frame times (lags since the first frame), strictly increasing, ≥ 0. */
  readonly t: ArrayLike<number>;
  readonly realisations: readonly RealisationTracks[];
}

/** Per-realisation sums of one estimator: the curve is Σ_i A_i[k] / Σ_i W_i[k]. */
export interface PairCurve {
  readonly A: Float64Array;
  readonly W: Float64Array;
}

/** Sums of the cohort of one window for one realisation (index m = k − i1). */
export interface CohortSums {
  /** Displacement sums A and the constant weight W of the fixed set. */
  readonly A: Float64Array;
  readonly W: number;
  /** Spread (position) sums at each frame of the window, same weight W. */
  readonly RA: Float64Array;
  /** Objects in the cohort, objects main at t₁, objects main at t₁ and at t₂ (present in between). */
  readonly n: number;
  readonly nStart: number;
  readonly nBoth: number;
}

/** Accumulates cross-group pair sums of vectors (no allocation after construction). */
class PairAccumulator {
  n = 0;
  s2 = 0;
  sx = 0;
  sy = 0;
  sz = 0;
  #within = 0;
  #pairsWithin = 0;
  readonly #gn: Float64Array;
  readonly #g2: Float64Array;
  readonly #gx: Float64Array;
  readonly #gy: Float64Array;
  readonly #gz: Float64Array;
  readonly #touched: Int32Array;
  #nt = 0;

  constructor(groups: number) {
    this.#gn = new Float64Array(groups);
    this.#g2 = new Float64Array(groups);
    this.#gx = new Float64Array(groups);
    this.#gy = new Float64Array(groups);
    this.#gz = new Float64Array(groups);
    this.#touched = new Int32Array(groups);
  }

  reset(): void {
    this.n =
      this.s2 =
      this.sx =
      this.sy =
      this.sz =
        0;
    for (let q = 0; q < this.#nt; q++) {
      const g = this.#touched[q];
      this.#gn[g] =
        this.#g2[g] =
        this.#gx[g] =
        this.#gy[g] =
        this.#gz[g] =
          0;
    }
    this.#nt = 0;
  }

  add(ax: number, ay: number, az: number, g: number): void {
    const v = ax * ax + ay * ay + az * az;
    this.n++;
    this.s2 += v;
    this.sx += ax;
    this.sy += ay;
    this.sz += az;
    if (g >= 0) {
      if (this.#gn[g] === 0) this.#touched[this.#nt++] = g;
      this.#gn[g]++;
      this.#g2[g] += v;
      this.#gx[g] += ax;
      this.#gy[g] += ay;
      this.#gz[g] += az;
    }
  }

  /** A = C/N (cross-group pair sum over N); call `weight` for W. Singletons when no group was added. */
  pairSum(): number {
    const N = this.n;
    if (N < 2) return 0;
    let c = N * this.s2 - (this.sx * this.sx + this.sy * this.sy + this.sz * this.sz);
    let within = 0;
    let pw = 0;
    for (let q = 0; q < this.#nt; q++) {
      const g = this.#touched[q];
      const ng = this.#gn[g];
      within += ng * this.#g2[g] - (this.#gx[g] ** 2 + this.#gy[g] ** 2 + this.#gz[g] ** 2);
      pw += ng * ng;
    }
    this.#within = within;
    this.#pairsWithin = pw;
    c -= within;
    return Math.max(0, c) / N;
  }

  /** W = 2P/N after `pairSum` (N − 1 for singletons). */
  weight(): number {
    const N = this.n;
    if (N < 2) return 0;
    const sumSq = this.#nt > 0 ? this.#pairsWithin : N;
    return (N * N - sumSq) / N;
  }
}

/**
 * The prepared ensemble: validated tracks, presence and main-membership runs, and the origin and lag sums of
 * every realisation. Cohort sums are computed per window on demand and cached.
 */
export class PreparedTracks {
  readonly dimension: 2 | 3;
  readonly K: number;
  readonly t: Float64Array;
  readonly realisations: number;
  /** Frame lags of the lag estimator (log-spaced, 20 per decade); empty when frames are not equally spaced. */
  readonly lags: Int32Array;
  /** Time of each lag. */
  readonly lagTimes: Float64Array;
  /** Why there is no lag estimator (frames not equally spaced), else null. */
  readonly lagProblem: string | null;
  /** Origin sums per realisation (length K). */
  readonly origin: readonly PairCurve[];
  /** Lag sums per realisation at index s·L + q (L = lags.length): start frame s, lag lags[q]. */
  readonly lag: readonly PairCurve[];
  /** Objects labelled main per realisation and frame. */
  readonly mainCount: readonly Float64Array[];
  readonly #tracks: readonly RealisationTracks[];
  readonly #runStart: Int32Array[] = [];
  readonly #mainStart: Int32Array[] = [];
  readonly #dense: (Int32Array | null)[] = [];
  readonly #acc: PairAccumulator;
  readonly #cohorts = new Map<number, CohortSums[]>();

  constructor(ens: TrackEnsemble) {
    validateTracks(ens);
    this.dimension = ens.dimension;
    this.t = Float64Array.from(ens.t);
    const K = this.t.length;
    this.K = K;
    this.#tracks = ens.realisations;
    this.realisations = ens.realisations.length;
    let maxGroups = 1;
    for (const tr of ens.realisations) {
      const M = tr.objects;
      const run = new Int32Array(K * M);
      const mrun = new Int32Array(K * M);
      for (let j = 0; j < M; j++) {
        let r = -1, m = -1;
        for (let k = 0; k < K; k++) {
          const q = k * M + j;
          const present = tr.x[q] === tr.x[q];
          r = present ? (r < 0 ? k : r) : -1;
          m = present && tr.main[q] === 1 ? (m < 0 ? k : m) : -1;
          run[q] = r;
          mrun[q] = m;
        }
      }
      this.#runStart.push(run);
      this.#mainStart.push(mrun);
      if (tr.group) {
        const dense = new Int32Array(K * M);
        const ids = new Map<number, number>();
        for (let k = 0; k < K; k++) {
          ids.clear();
          for (let j = 0; j < M; j++) {
            const g = tr.group[k * M + j];
            let s = ids.get(g);
            if (s === undefined) ids.set(g, s = ids.size);
            dense[k * M + j] = s;
          }
          maxGroups = Math.max(maxGroups, ids.size);
        }
        this.#dense.push(dense);
      } else this.#dense.push(null);
    }
    this.#acc = new PairAccumulator(maxGroups);
    // Equally spaced frames (relative tolerance 1e-6) allow lag increments.
    const dt = K > 1 ? this.t[1] - this.t[0] : Number.NaN;
    let uniform = K > 2;
    for (let k = 1; k < K && uniform; k++) {
      uniform = Math.abs(this.t[k] - this.t[k - 1] - dt) <= 1e-6 * dt;
    }
    this.lagProblem = uniform
      ? null
      : "frames are not equally spaced in time, so lag increments are not defined";
    const lagList: number[] = [];
    if (uniform) {
      for (let q = 0; q <= 200; q++) {
        const L = Math.round(10 ** (q / 20));
        if (L >= K) break;
        if (lagList.length === 0 || L > lagList[lagList.length - 1]) lagList.push(L);
      }
    }
    this.lags = Int32Array.from(lagList);
    this.lagTimes = Float64Array.from(lagList, (L) => L * dt);
    this.origin = ens.realisations.map((_, i) => this.#originSums(i));
    this.lag = ens.realisations.map((_, i) => this.#lagSums(i));
    this.mainCount = ens.realisations.map((tr) => {
      const out = new Float64Array(K);
      for (let k = 0; k < K; k++) {
        let c = 0;
        for (let j = 0; j < tr.objects; j++) c += tr.main[k * tr.objects + j];
        out[k] = c;
      }
      return out;
    });
  }

  /** Displacement of object j from frame s to frame e added to the accumulator (groups at frame s). */
  #addDisplacement(i: number, j: number, s: number, e: number): void {
    const tr = this.#tracks[i];
    const M = tr.objects;
    const a = s * M + j, b = e * M + j;
    const dense = this.#dense[i];
    this.#acc.add(
      tr.x[b] - tr.x[a],
      tr.y[b] - tr.y[a],
      tr.z ? tr.z[b] - tr.z[a] : 0,
      dense ? dense[a] : -1,
    );
  }

  #originSums(i: number): PairCurve {
    const tr = this.#tracks[i];
    const M = tr.objects, K = this.K;
    const run = this.#runStart[i];
    const A = new Float64Array(K), W = new Float64Array(K);
    const acc = this.#acc;
    for (let k = 1; k < K; k++) {
      acc.reset();
      for (let j = 0; j < M; j++) {
        if (tr.main[j] === 1 && tr.main[k * M + j] === 1 && run[k * M + j] === 0) {
          this.#addDisplacement(i, j, 0, k);
        }
      }
      A[k] = acc.pairSum();
      W[k] = acc.weight();
    }
    // At t₀ the displacement is zero; the weight is that of the starting set (for completeness).
    acc.reset();
    for (let j = 0; j < M; j++) if (tr.main[j] === 1) this.#addDisplacement(i, j, 0, 0);
    acc.pairSum();
    W[0] = acc.weight();
    return { A, W };
  }

  #lagSums(i: number): PairCurve {
    const tr = this.#tracks[i];
    const M = tr.objects, K = this.K, L = this.lags.length;
    const run = this.#runStart[i];
    const A = new Float64Array(K * L), W = new Float64Array(K * L);
    const acc = this.#acc;
    const { x, y, z, main } = tr;
    const grouped = this.#dense[i] !== null;
    for (let s = 0; s < K; s++) {
      const so = s * M;
      for (let q = 0; q < L; q++) {
        const e = s + this.lags[q];
        if (e >= K) break;
        const eo = e * M;
        if (grouped) {
          acc.reset();
          for (let j = 0; j < M; j++) {
            const r = run[eo + j];
            if (main[so + j] === 1 && main[eo + j] === 1 && r <= s && r >= 0) {
              this.#addDisplacement(i, j, s, e);
            }
          }
          A[s * L + q] = acc.pairSum();
          W[s * L + q] = acc.weight();
          continue;
        }
        // Singletons (2D): A = Σ|a|² − |Σa|²/N, W = N − 1, inline.
        let n = 0, s2 = 0, sx = 0, sy = 0, sz = 0;
        for (let j = 0; j < M; j++) {
          const r = run[eo + j];
          if (main[so + j] !== 1 || main[eo + j] !== 1 || r > s || r < 0) continue;
          const ax = x[eo + j] - x[so + j], ay = y[eo + j] - y[so + j];
          const az = z === null ? 0 : z[eo + j] - z[so + j];
          n++;
          s2 += ax * ax + ay * ay + az * az;
          sx += ax;
          sy += ay;
          sz += az;
        }
        if (n >= 2) {
          A[s * L + q] = Math.max(0, s2 - (sx * sx + sy * sy + sz * sz) / n);
          W[s * L + q] = n - 1;
        }
      }
    }
    return { A, W };
  }

  /** Cohort sums of window [i1, i2] for every realisation (cached per window). */
  cohort(i1: number, i2: number): readonly CohortSums[] {
    const key = i1 * this.K + i2;
    const hit = this.#cohorts.get(key);
    if (hit) return hit;
    const out = this.#tracks.map((_, i) => this.#cohortSums(i, i1, i2));
    this.#cohorts.set(key, out);
    return out;
  }

  #cohortSums(i: number, i1: number, i2: number): CohortSums {
    const tr = this.#tracks[i];
    const M = tr.objects;
    const mrun = this.#mainStart[i];
    const run = this.#runStart[i];
    const dense = this.#dense[i];
    const members: number[] = [];
    let nStart = 0, nBoth = 0;
    for (let j = 0; j < M; j++) {
      if (tr.main[i1 * M + j] !== 1) continue;
      nStart++;
      const q2 = i2 * M + j;
      if (tr.main[q2] === 1 && run[q2] >= 0 && run[q2] <= i1) nBoth++;
      if (mrun[q2] >= 0 && mrun[q2] <= i1) members.push(j);
    }
    const n = i2 - i1 + 1;
    const A = new Float64Array(n), RA = new Float64Array(n);
    const acc = this.#acc;
    let W = 0;
    for (let m = 0; m < n; m++) {
      const k = i1 + m;
      acc.reset();
      for (const j of members) this.#addDisplacement(i, j, i1, k);
      A[m] = acc.pairSum();
      W = acc.weight();
      // Spread of the same set at frame k about its first member (shift against cancellation).
      acc.reset();
      if (members.length > 0) {
        const j0 = members[0];
        const x0 = tr.x[k * M + j0], y0 = tr.y[k * M + j0], z0 = tr.z ? tr.z[k * M + j0] : 0;
        for (const j of members) {
          const q = k * M + j;
          acc.add(tr.x[q] - x0, tr.y[q] - y0, tr.z ? tr.z[q] - z0 : 0, dense ? dense[i1 * M + j] : -1);
        }
      }
      RA[m] = acc.pairSum();
    }
    return { A, W, RA, n: members.length, nStart, nBoth };
  }
}

/** Validates and prepares an ensemble of tracks (see `PreparedTracks`). */
export function prepareTracks(ens: TrackEnsemble): PreparedTracks {
  return new PreparedTracks(ens);
}

function validateTracks(ens: TrackEnsemble): void {
  const d = ens.dimension;
  if (d !== 2 && d !== 3) throw new RangeError(`dimension must be 2 or 3, got ${d}`);
  const t = ens.t;
  const K = t.length;
  if (K < 3) throw new RangeError(`need at least 3 frames, got ${K}`);
  for (let k = 0; k < K; k++) {
    if (!(t[k] >= 0 && Number.isFinite(t[k])) || (k > 0 && !(t[k] > t[k - 1]))) {
      throw new RangeError(`times must be finite, ≥ 0 and strictly increasing (index ${k}: ${t[k]})`);
    }
  }
  if (ens.realisations.length < 1) throw new RangeError("need at least one realisation");
  ens.realisations.forEach((tr, i) => {
    const n = K * tr.objects;
    if (!Number.isInteger(tr.objects) || tr.objects < 0) {
      throw new RangeError(`realisation ${i}: objects must be an integer ≥ 0, got ${tr.objects}`);
    }
    const check = (name: string, a: ArrayLike<number> | null, required: boolean) => {
      if (a === null) {
        if (required) throw new RangeError(`realisation ${i}: ${name} is required`);
        return;
      }
      if (a.length !== n) {
        throw new RangeError(
          `realisation ${i}: ${name} has ${a.length} values, expected frames × objects = ${n}`,
        );
      }
    };
    check("x", tr.x, true);
    check("y", tr.y, true);
    check("z", tr.z, d === 3);
    if (d === 2 && tr.z !== null) throw new RangeError(`realisation ${i}: z given for a 2D ensemble`);
    check("main", tr.main, true);
    check("group", tr.group, false);
  });
}
