/**
 * Longitudinal and transverse two-point velocity correlation functions f(r), g(r) from velocities sampled at
 * probe points, with probes inside vortex cores excluded. Works for any engine: the caller supplies vortex
 * positions and a velocity-field evaluator.
 *
 * Method: per snapshot, probes closer than `coreRadius` to any vortex (or filament point) are dropped (cell
 * list with cells of the core radius), the field is evaluated at the rest, and the snapshot-mean velocity is
 * removed (optional). For every probe pair with separation r < r_max, with e = (x_j − x_i)/r,
 * u_L = u·e and the transverse product (u_i·u_j − u_{L,i}u_{L,j})/(d − 1) (the mean over the d − 1 directions
 * normal to e) are summed in uniform bins of r. With u′² = ⟨|u|²⟩/d over all kept probes,
 * f = ⟨u_{L,i}u_{L,j}⟩/u′² and g = ⟨u_{N,i}u_{N,j}⟩/u′², so f(0) = g(0) = 1 for an isotropic field.
 * Snapshots are pooled (running sums with Neumaier compensation); the standard error of each bin comes from
 * the scatter of the per-snapshot values (independent snapshots are the units; pairs within a snapshot are
 * correlated). For an incompressible isotropic field g = f + (r/(d − 1)) df/dr; `transverseFromLongitudinal`
 * evaluates that right-hand side from a sampled f (central differences), `longitudinalFromTransverse` its
 * integral form (robust to sampling noise).
 *
 * References: T. von Kármán, L. Howarth, Proc. R. Soc. A 164, 192 (1938), doi:10.1098/rspa.1938.0013;
 * S.B. Pope, Turbulent Flows (CUP 2000), doi:10.1017/CBO9780511840531, §6.2; G.K. Batchelor, The Theory of
 * Homogeneous Turbulence (CUP 1953); A.S. Monin, A.M. Yaglom, Statistical Fluid Mechanics Vol. 2 (MIT Press
 * 1975) (general d).
 *
 * @example
 * ```ts
 * import { velocityCorrelations } from "./correlations.ts";
 * // One vortex of circulation 1 at the origin, probes on a grid, velocity Γ/(2πr) azimuthal.
 * const px = new Float64Array(400).map((_, i) => (i % 20) - 9.5);
 * const py = new Float64Array(400).map((_, i) => Math.floor(i / 20) - 9.5);
 * const res = velocityCorrelations({
 *   x: px,
 *   y: py,
 *   vortices: { x: [0], y: [0] },
 *   velocity: (n, x, y, _z, u, v) => {
 *     for (let i = 0; i < n; i++) {
 *       const r2 = x[i] * x[i] + y[i] * y[i];
 *       u[i] = -y[i] / (2 * Math.PI * r2);
 *       v[i] = x[i] / (2 * Math.PI * r2);
 *     }
 *   },
 * }, { dimension: 2, rMax: 5, bins: 25, coreRadius: 0.1 });
 * console.log(res.r, res.f, res.g);
 * ```
 */

/**
 * Fills u, v (and w in 3D) with the velocity at the first n points (x, y, z). `z` and `w` are null in 2D.
 */
export type VelocityField = (
  n: number,
  x: Float64Array,
  y: Float64Array,
  z: Float64Array | null,
  u: Float64Array,
  v: Float64Array,
  w: Float64Array | null,
) => void;

/** Positions of vortices (2D) or filament points (3D) around which probes are excluded. */
export interface VortexPositions {
  readonly x: ArrayLike<number>;
  readonly y: ArrayLike<number>;
  readonly z?: ArrayLike<number> | null;
}

export interface ProbeSnapshot {
  readonly x: ArrayLike<number>;
  readonly y: ArrayLike<number>;
  /** Required iff dimension = 3. */
  readonly z?: ArrayLike<number> | null;
  readonly vortices: VortexPositions;
  readonly velocity: VelocityField;
}

export interface CorrelationOptions {
  readonly dimension: 2 | 3;
  /** Largest separation (exclusive). */
  readonly rMax: number;
  /** Number of uniform bins in [0, rMax). */
  readonly bins: number;
  /** Probes closer than this to a vortex are excluded (≥ 0; 0 keeps every probe). */
  readonly coreRadius: number;
  /** Subtract the snapshot-mean velocity of the kept probes (default true). */
  readonly removeMean?: boolean;
}

export interface VelocityCorrelations {
  readonly dimension: 2 | 3;
  /** Bin centres. */
  readonly r: Float64Array;
  /** Mean separation of the pairs in each bin (NaN for empty bins). */
  readonly rMean: Float64Array;
  /** Longitudinal correlation f per bin (NaN for empty bins). */
  readonly f: Float64Array;
  /** Transverse correlation g per bin. */
  readonly g: Float64Array;
  /** Pairs per bin. */
  readonly pairs: Float64Array;
  /** Standard errors from the snapshot scatter (null with fewer than 2 snapshots). */
  readonly fStdErr: Float64Array | null;
  readonly gStdErr: Float64Array | null;
  /** u′² = ⟨|u|²⟩/d over the kept probes. */
  readonly uPrime2: number;
  /** ⟨u_a²⟩/u′² per axis a (all 1 for an isotropic field). */
  readonly axisRatios: readonly number[];
  readonly snapshots: number;
  readonly probesKept: number;
  readonly probesExcluded: number;
}

/** Accumulates pair statistics over snapshots (frames, realisations) and returns pooled f and g. */
export class VelocityCorrelationAccumulator {
  readonly #d: 2 | 3;
  readonly #rMax: number;
  readonly #bins: number;
  readonly #core: number;
  readonly #removeMean: boolean;
  readonly #sumL: Float64Array;
  readonly #sumN: Float64Array;
  readonly #sumR: Float64Array;
  /** Neumaier compensation terms of the running sums over snapshots. */
  readonly #comp: Float64Array;
  readonly #count: Float64Array;
  // Per-snapshot scratch and Welford state of snapshot-level f and g.
  readonly #snapL: Float64Array;
  readonly #snapN: Float64Array;
  readonly #snapC: Float64Array;
  readonly #snapR: Float64Array;
  readonly #wN: Float64Array;
  readonly #wMeanF: Float64Array;
  readonly #wM2F: Float64Array;
  readonly #wMeanG: Float64Array;
  readonly #wM2G: Float64Array;
  readonly #axis: Float64Array;
  #probes = 0;
  #excluded = 0;
  #snapshots = 0;

  constructor(options: CorrelationOptions) {
    const { dimension: d, rMax, bins, coreRadius } = options;
    if (d !== 2 && d !== 3) throw new RangeError(`dimension must be 2 or 3, got ${d}`);
    if (!(rMax > 0 && Number.isFinite(rMax))) {
      throw new RangeError(`rMax must be positive and finite, got ${rMax}`);
    }
    if (!Number.isInteger(bins) || bins < 1) throw new RangeError(`bins must be an integer ≥ 1, got ${bins}`);
    if (!(coreRadius >= 0 && Number.isFinite(coreRadius))) {
      throw new RangeError(`coreRadius must be finite and ≥ 0, got ${coreRadius}`);
    }
    this.#d = d;
    this.#rMax = rMax;
    this.#bins = bins;
    this.#core = coreRadius;
    this.#removeMean = options.removeMean ?? true;
    const mk = () => new Float64Array(bins);
    this.#sumL = mk();
    this.#sumN = mk();
    this.#sumR = mk();
    this.#comp = new Float64Array(3 * bins + d);
    this.#count = mk();
    this.#snapL = mk();
    this.#snapN = mk();
    this.#snapC = mk();
    this.#snapR = mk();
    this.#wN = mk();
    this.#wMeanF = mk();
    this.#wM2F = mk();
    this.#wMeanG = mk();
    this.#wM2G = mk();
    this.#axis = new Float64Array(d);
  }

  /** Adds one snapshot; returns how many probes were kept and excluded. */
  add(snapshot: ProbeSnapshot): { kept: number; excluded: number } {
    const d = this.#d;
    const P = snapshot.x.length;
    if (snapshot.y.length !== P || (d === 3 && (!snapshot.z || snapshot.z.length !== P))) {
      throw new RangeError(
        `probe coordinate arrays must all have length ${P}${d === 3 ? " (x, y and z)" : ""}`,
      );
    }
    const vz = snapshot.vortices.z ?? null;
    if (
      snapshot.vortices.y.length !== snapshot.vortices.x.length ||
      (d === 3 && this.#core > 0 && (!vz || vz.length !== snapshot.vortices.x.length))
    ) {
      throw new RangeError("vortex coordinate arrays must have equal lengths (x, y and, in 3D, z)");
    }
    for (let i = 0; i < P; i++) {
      if (
        !Number.isFinite(snapshot.x[i]) || !Number.isFinite(snapshot.y[i]) ||
        (d === 3 && !Number.isFinite(snapshot.z![i]))
      ) {
        throw new RangeError(`probe ${i} has a non-finite coordinate`);
      }
    }
    const keep = this.#coreFilter(snapshot, P);
    let n = 0;
    for (let i = 0; i < P; i++) if (keep[i]) n++;
    const x = new Float64Array(n);
    const y = new Float64Array(n);
    const z = d === 3 ? new Float64Array(n) : null;
    n = 0;
    for (let i = 0; i < P; i++) {
      if (!keep[i]) continue;
      x[n] = snapshot.x[i];
      y[n] = snapshot.y[i];
      if (z) z[n] = snapshot.z![i];
      n++;
    }
    const u = new Float64Array(n);
    const v = new Float64Array(n);
    const w = d === 3 ? new Float64Array(n) : null;
    if (n > 0) snapshot.velocity(n, x, y, z, u, v, w);
    for (let i = 0; i < n; i++) {
      if (!Number.isFinite(u[i]) || !Number.isFinite(v[i]) || (w && !Number.isFinite(w[i]))) {
        throw new RangeError(`velocity at kept probe ${i} is not finite (is the core radius too small?)`);
      }
    }
    this.#excluded += P - n;
    this.#probes += n;
    if (n < 2) return { kept: n, excluded: P - n };

    if (this.#removeMean) {
      for (const c of w ? [u, v, w] : [u, v]) {
        let s = 0;
        for (let i = 0; i < n; i++) s += c[i];
        s /= n;
        for (let i = 0; i < n; i++) c[i] -= s;
      }
    }
    const bins = this.#bins;
    let e2 = 0;
    const comps = w ? [u, v, w] : [u, v];
    for (let a = 0; a < d; a++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += comps[a][i] * comps[a][i];
      neumaierAdd(this.#axis, this.#comp, a, 3 * bins + a, s);
      e2 += s;
    }
    const snapU2 = e2 / (d * n);

    const rMax = this.#rMax;
    const inv = bins / rMax;
    const sL = this.#snapL.fill(0);
    const sN = this.#snapN.fill(0);
    const sC = this.#snapC.fill(0);
    const sR = this.#snapR.fill(0);
    const dm1 = d - 1;
    for (let i = 0; i < n - 1; i++) {
      const xi = x[i];
      const yi = y[i];
      const zi = z ? z[i] : 0;
      const ui = u[i];
      const vi = v[i];
      const wi = w ? w[i] : 0;
      for (let j = i + 1; j < n; j++) {
        const dx = x[j] - xi;
        const dy = y[j] - yi;
        const dz = z ? z[j] - zi : 0;
        const r2 = dx * dx + dy * dy + dz * dz;
        if (!(r2 < rMax * rMax) || r2 === 0) continue;
        const r = Math.sqrt(r2);
        const b = Math.min(bins - 1, Math.floor(r * inv));
        const ex = dx / r;
        const ey = dy / r;
        const ez = dz / r;
        const uj = u[j];
        const vj = v[j];
        const wj = w ? w[j] : 0;
        const li = ui * ex + vi * ey + wi * ez;
        const lj = uj * ex + vj * ey + wj * ez;
        const dot = ui * uj + vi * vj + wi * wj;
        sL[b] += li * lj;
        sN[b] += (dot - li * lj) / dm1;
        sC[b] += 1;
        sR[b] += r;
      }
    }
    this.#snapshots++;
    for (let b = 0; b < bins; b++) {
      neumaierAdd(this.#sumL, this.#comp, b, b, sL[b]);
      neumaierAdd(this.#sumN, this.#comp, b, bins + b, sN[b]);
      neumaierAdd(this.#sumR, this.#comp, b, 2 * bins + b, sR[b]);
      this.#count[b] += sC[b];
      if (sC[b] === 0 || !(snapU2 > 0)) continue;
      const fs = sL[b] / (sC[b] * snapU2);
      const gs = sN[b] / (sC[b] * snapU2);
      const k = ++this.#wN[b];
      const df = fs - this.#wMeanF[b];
      this.#wMeanF[b] += df / k;
      this.#wM2F[b] += df * (fs - this.#wMeanF[b]);
      const dg = gs - this.#wMeanG[b];
      this.#wMeanG[b] += dg / k;
      this.#wM2G[b] += dg * (gs - this.#wMeanG[b]);
    }
    return { kept: n, excluded: P - n };
  }

  /** Pooled correlations over all snapshots added so far. */
  result(): VelocityCorrelations {
    const d = this.#d;
    const bins = this.#bins;
    let e2 = 0;
    const axis = Array.from(this.#axis, (v, a) => v + this.#comp[3 * bins + a]);
    for (let a = 0; a < d; a++) e2 += axis[a];
    const u2 = this.#probes > 0 ? e2 / (d * this.#probes) : Number.NaN;
    const r = new Float64Array(bins);
    const rMean = new Float64Array(bins);
    const f = new Float64Array(bins);
    const g = new Float64Array(bins);
    const pairs = Float64Array.from(this.#count);
    const many = this.#snapshots >= 2;
    const fe = many ? new Float64Array(bins) : null;
    const ge = many ? new Float64Array(bins) : null;
    const width = this.#rMax / bins;
    for (let b = 0; b < bins; b++) {
      r[b] = (b + 0.5) * width;
      const c = this.#count[b];
      rMean[b] = c > 0 ? (this.#sumR[b] + this.#comp[2 * bins + b]) / c : Number.NaN;
      f[b] = c > 0 ? (this.#sumL[b] + this.#comp[b]) / (c * u2) : Number.NaN;
      g[b] = c > 0 ? (this.#sumN[b] + this.#comp[bins + b]) / (c * u2) : Number.NaN;
      const k = this.#wN[b];
      if (fe && ge) {
        fe[b] = k >= 2 ? Math.sqrt(this.#wM2F[b] / (k - 1) / k) : Number.NaN;
        ge[b] = k >= 2 ? Math.sqrt(this.#wM2G[b] / (k - 1) / k) : Number.NaN;
      }
    }
    const axisRatios = axis.map((s) => s / this.#probes / u2);
    return {
      dimension: d,
      r,
      rMean,
      f,
      g,
      pairs,
      fStdErr: fe,
      gStdErr: ge,
      uPrime2: u2,
      axisRatios,
      snapshots: this.#snapshots,
      probesKept: this.#probes,
      probesExcluded: this.#excluded,
    };
  }

  /** keep[i] = 1 unless probe i is within the core radius of a vortex (cell list with hashed cell keys). */
  #coreFilter(s: ProbeSnapshot, P: number): Uint8Array {
    const keep = new Uint8Array(P).fill(1);
    const a = this.#core;
    const V = s.vortices.x.length;
    if (a === 0 || V === 0) return keep;
    const d = this.#d;
    const vx = s.vortices.x;
    const vy = s.vortices.y;
    const vz = s.vortices.z ?? null;
    const cells = new Map<number, number[]>();
    for (let q = 0; q < V; q++) {
      const key = cellKey(Math.floor(vx[q] / a), Math.floor(vy[q] / a), d === 3 ? Math.floor(vz![q] / a) : 0);
      const list = cells.get(key);
      if (list) list.push(q);
      else cells.set(key, [q]);
    }
    const a2 = a * a;
    const zr = d === 3 ? 1 : 0;
    for (let i = 0; i < P; i++) {
      const px = s.x[i];
      const py = s.y[i];
      const pz = d === 3 ? s.z![i] : 0;
      const cx = Math.floor(px / a);
      const cy = Math.floor(py / a);
      const cz = d === 3 ? Math.floor(pz / a) : 0;
      search: for (let ox = -1; ox <= 1; ox++) {
        for (let oy = -1; oy <= 1; oy++) {
          for (let oz = -zr; oz <= zr; oz++) {
            const list = cells.get(cellKey(cx + ox, cy + oy, cz + oz));
            if (!list) continue;
            for (const q of list) {
              const dx = vx[q] - px;
              const dy = vy[q] - py;
              const dz = d === 3 ? vz![q] - pz : 0;
              if (dx * dx + dy * dy + dz * dz < a2) {
                keep[i] = 0;
                break search;
              }
            }
          }
        }
      }
    }
    return keep;
  }
}

/** Correlations of a single snapshot (see `VelocityCorrelationAccumulator`). */
export function velocityCorrelations(
  snapshot: ProbeSnapshot,
  options: CorrelationOptions,
): VelocityCorrelations {
  const acc = new VelocityCorrelationAccumulator(options);
  acc.add(snapshot);
  return acc.result();
}

/**
 * The incompressibility prediction g = f + (r/(d − 1)) df/dr from sampled f(r) (central differences inside,
 * one-sided at the ends; r must be strictly increasing, f finite).
 */
export function transverseFromLongitudinal(
  r: ArrayLike<number>,
  f: ArrayLike<number>,
  dimension: 2 | 3,
): Float64Array {
  const n = r.length;
  if (f.length !== n || n < 2) throw new RangeError("r and f must have the same length ≥ 2");
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const lo = Math.max(0, i - 1);
    const hi = Math.min(n - 1, i + 1);
    const df = (f[hi] - f[lo]) / (r[hi] - r[lo]);
    out[i] = f[i] + (r[i] / (dimension - 1)) * df;
  }
  return out;
}

/**
 * The integral form of the same relation, (r^{d−1} f)' = (d − 1) r^{d−2} g, i.e.
 * f(r) = ((d − 1)/r^{d−1}) ∫₀^r s^{d−2} g(s) ds, evaluated from sampled g by the trapezoidal rule starting at
 * (0, g(0) = 1). Integration averages out sampling noise, so this is the robust way to check measured f
 * against measured g (the derivative form amplifies noise). r must be increasing and positive.
 */
export function longitudinalFromTransverse(
  r: ArrayLike<number>,
  g: ArrayLike<number>,
  dimension: 2 | 3,
): Float64Array {
  const n = r.length;
  if (g.length !== n || n < 1) throw new RangeError("r and g must have the same length ≥ 1");
  const out = new Float64Array(n);
  const p = dimension - 2;
  let integral = 0;
  let rPrev = 0;
  let hPrev = dimension === 2 ? 1 : 0; // s^{d−2} g(s) at s = 0 with g(0) = 1
  for (let i = 0; i < n; i++) {
    if (!(r[i] > rPrev)) {
      throw new RangeError(`r must be positive and strictly increasing (index ${i}: ${r[i]})`);
    }
    const h = Math.pow(r[i], p) * g[i];
    integral += 0.5 * (h + hPrev) * (r[i] - rPrev);
    out[i] = ((dimension - 1) * integral) / Math.pow(r[i], dimension - 1);
    rPrev = r[i];
    hPrev = h;
  }
  return out;
}

/** sum[i] += v with Neumaier's compensation kept in comp[j] (Neumaier, ZAMM 54, 39 (1974)). */
function neumaierAdd(sum: Float64Array, comp: Float64Array, i: number, j: number, v: number): void {
  const s = sum[i];
  const t = s + v;
  comp[j] += Math.abs(s) >= Math.abs(v) ? (s - t) + v : (v - t) + s;
  sum[i] = t;
}

function cellKey(ix: number, iy: number, iz: number): number {
  // Hash of the integer cell; collisions only add candidates (distances are checked exactly).
  return ((Math.imul(ix, 73856093) ^ Math.imul(iy, 19349663) ^ Math.imul(iz, 83492791)) >>> 0);
}
