/**
 * Geometry kernels shared by the classifiers and observables: the trimmed (robust) cluster centre and RMS
 * radius, loop boundaries of filament frames, and filament segments.
 *
 * Method (centre, docs/methods.md §4.3): weighted centroid c = Σ wᵢ rᵢ / Σ wᵢ and R_rms² = Σ wᵢ |rᵢ − c|² / Σ wᵢ over
 * the candidate set (w = 1 for 2D vortices, w = segment length at segment midpoints for 3D filaments); then
 * points farther than 3 R_rms from c are dropped and both are recomputed, until no point is dropped. Points are
 * only ever dropped, never re-admitted, so the iteration ends after at most n rounds (in practice 1–3).
 * Sums are Neumaier-compensated; R_rms uses the two-pass form about the final centroid.
 *
 * References: A. Neumaier, "Rundungsfehleranalyse einiger Verfahren zur Summation endlicher Summen",
 * ZAMM 54, 39 (1974), doi:10.1002/zamm.19740540106. N.J. Higham, Accuracy and Stability of Numerical
 * Algorithms, 2nd ed. (SIAM, 2002) §4.3, doi:10.1137/1.9780898718027.
 */

/** Result of {@link trimmedCentre} (mutable scratch owned by the caller). */
export interface CentreResult {
  cx: number;
  cy: number;
  cz: number;
  /** RMS radius about (cx, cy, cz) of the kept set. */
  rms: number;
  /** Number of kept points. */
  count: number;
  /** Total weight of the kept points (= count for unit weights). */
  weight: number;
}

export function newCentreResult(): CentreResult {
  return { cx: Number.NaN, cy: Number.NaN, cz: Number.NaN, rms: Number.NaN, count: 0, weight: 0 };
}

/** Distance factor beyond which points are trimmed (docs/methods.md §4.3: "excluding points beyond 3R_rms"). */
export const TRIM_FACTOR = 3;

/**
 * Robust weighted centre and RMS radius of the points with `keep[i] = 1` (i < n). `keep` is modified in place:
 * on return it flags the kept (untrimmed) points. `z` = null means planar (cz = 0); `w` = null means unit
 * weights. Points with a non-finite coordinate are dropped first. With no point left, the result is NaN with
 * count 0.
 */
export function trimmedCentre(
  n: number,
  x: Float64Array,
  y: Float64Array,
  z: Float64Array | null,
  w: Float64Array | null,
  keep: Uint8Array,
  out: CentreResult,
): CentreResult {
  for (let i = 0; i < n; i++) {
    if (
      keep[i] === 1 &&
      !(Number.isFinite(x[i]) && Number.isFinite(y[i]) && (z === null || Number.isFinite(z[i])))
    ) {
      keep[i] = 0;
    }
  }
  for (let round = 0; round <= n; round++) {
    weightedMoments(n, x, y, z, w, keep, out);
    if (out.count === 0 || !(out.rms > 0)) return out;
    const limit2 = TRIM_FACTOR * TRIM_FACTOR * out.rms * out.rms;
    let dropped = 0;
    for (let i = 0; i < n; i++) {
      if (keep[i] !== 1) continue;
      const dx = x[i] - out.cx;
      const dy = y[i] - out.cy;
      const dz = z === null ? 0 : z[i] - out.cz;
      if (dx * dx + dy * dy + dz * dz > limit2) {
        keep[i] = 0;
        dropped++;
      }
    }
    if (dropped === 0) return out;
  }
  return out;
}

/** Weighted centroid and RMS radius of the flagged points (no trimming). */
export function weightedMoments(
  n: number,
  x: Float64Array,
  y: Float64Array,
  z: Float64Array | null,
  w: Float64Array | null,
  keep: Uint8Array,
  out: CentreResult,
): CentreResult {
  // Neumaier sums: s = running sum, c = compensation.
  let sw = 0, cw = 0, sx = 0, cx = 0, sy = 0, cy = 0, sz = 0, cz = 0;
  let count = 0;
  for (let i = 0; i < n; i++) {
    if (keep[i] !== 1) continue;
    const wi = w === null ? 1 : w[i];
    count++;
    let t = sw + wi;
    cw += Math.abs(sw) >= Math.abs(wi) ? (sw - t) + wi : (wi - t) + sw;
    sw = t;
    const vx = wi * x[i];
    t = sx + vx;
    cx += Math.abs(sx) >= Math.abs(vx) ? (sx - t) + vx : (vx - t) + sx;
    sx = t;
    const vy = wi * y[i];
    t = sy + vy;
    cy += Math.abs(sy) >= Math.abs(vy) ? (sy - t) + vy : (vy - t) + sy;
    sy = t;
    if (z !== null) {
      const vz = wi * z[i];
      t = sz + vz;
      cz += Math.abs(sz) >= Math.abs(vz) ? (sz - t) + vz : (vz - t) + sz;
      sz = t;
    }
  }
  const total = sw + cw;
  out.count = count;
  out.weight = total;
  if (count === 0 || !(total > 0)) {
    out.cx =
      out.cy =
      out.cz =
      out.rms =
        Number.NaN;
    return out;
  }
  const mx = (sx + cx) / total;
  const my = (sy + cy) / total;
  const mz = z === null ? 0 : (sz + cz) / total;
  let sr = 0, cr = 0;
  for (let i = 0; i < n; i++) {
    if (keep[i] !== 1) continue;
    const wi = w === null ? 1 : w[i];
    const dx = x[i] - mx;
    const dy = y[i] - my;
    const dz = z === null ? 0 : z[i] - mz;
    const v = wi * (dx * dx + dy * dy + dz * dz);
    const t = sr + v;
    cr += Math.abs(sr) >= Math.abs(v) ? (sr - t) + v : (v - t) + sr;
    sr = t;
  }
  out.cx = mx;
  out.cy = my;
  out.cz = mz;
  out.rms = Math.sqrt((sr + cr) / total);
  return out;
}

/**
 * Loop runs of a filament frame: `starts[0..m]` gets the first point index of each of the m loops (a loop is a
 * maximal run of equal `loop` values), with `starts[m] = n`. `starts` must hold n + 1 entries. Returns m.
 */
export function loopStarts(n: number, loop: Int32Array, starts: Int32Array): number {
  let m = 0;
  for (let i = 0; i < n; i++) {
    if (i === 0 || loop[i] !== loop[i - 1]) starts[m++] = i;
  }
  starts[m] = n;
  return m;
}

/**
 * Segments of closed filament loops: segment i joins point i to the next point of its loop (the last point of a
 * loop joins its first). Writes the length and midpoint of each segment; returns the total length
 * (Neumaier-compensated).
 */
export function loopSegments(
  m: number,
  starts: Int32Array,
  x: Float64Array,
  y: Float64Array,
  z: Float64Array,
  len: Float64Array,
  mx: Float64Array,
  my: Float64Array,
  mz: Float64Array,
): number {
  let s = 0, c = 0;
  for (let l = 0; l < m; l++) {
    const a = starts[l];
    const b = starts[l + 1];
    for (let i = a; i < b; i++) {
      const j = i + 1 < b ? i + 1 : a;
      const dx = x[j] - x[i];
      const dy = y[j] - y[i];
      const dz = z[j] - z[i];
      const v = Math.sqrt(dx * dx + dy * dy + dz * dz);
      len[i] = v;
      mx[i] = 0.5 * (x[i] + x[j]);
      my[i] = 0.5 * (y[i] + y[j]);
      mz[i] = 0.5 * (z[i] + z[j]);
      const t = s + v;
      c += Math.abs(s) >= Math.abs(v) ? (s - t) + v : (v - t) + s;
      s = t;
    }
  }
  return s + c;
}

/** Grows a typed array to at least `n` entries (doubling), keeping nothing. */
export function ensureF64(a: Float64Array<ArrayBuffer>, n: number): Float64Array<ArrayBuffer> {
  return a.length >= n ? a : new Float64Array(Math.max(n, 2 * a.length));
}

export function ensureI32(a: Int32Array<ArrayBuffer>, n: number): Int32Array<ArrayBuffer> {
  return a.length >= n ? a : new Int32Array(Math.max(n, 2 * a.length));
}

export function ensureU8(a: Uint8Array<ArrayBuffer>, n: number): Uint8Array<ArrayBuffer> {
  return a.length >= n ? a : new Uint8Array(Math.max(n, 2 * a.length));
}

/**
 * Median of the first `k` entries of `a` (reordered in place); NaN when k = 0. Even k: mean of the two middle
 * values. Method: Hoare's selection (quickselect) with median-of-three pivots, O(k) expected; C.A.R. Hoare,
 * "Algorithm 65: Find", Commun. ACM 4, 321 (1961), doi:10.1145/366622.366647.
 */
export function medianInPlace(a: Float64Array, k: number): number {
  if (k === 0) return Number.NaN;
  const hi = select(a, k, k >> 1);
  if ((k & 1) === 1) return hi;
  // After selection, entries below k/2 are ≤ hi: the lower middle is their maximum.
  let lo = a[0];
  for (let i = 1; i < k >> 1; i++) if (a[i] > lo) lo = a[i];
  return 0.5 * (lo + hi);
}

/** Places the r-th smallest of a[0..k) at a[r], smaller ones before it; returns it. */
function select(a: Float64Array, k: number, r: number): number {
  let left = 0;
  let right = k - 1;
  while (right > left) {
    // Median of three as pivot value.
    const mid = (left + right) >> 1;
    const p0 = a[left], p1 = a[mid], p2 = a[right];
    const pivot = p0 < p1 ? (p1 < p2 ? p1 : p0 < p2 ? p2 : p0) : (p0 < p2 ? p0 : p1 < p2 ? p2 : p1);
    // Three-way partition: [left, lt) < pivot, [lt, gt] = pivot, (gt, right] > pivot (equal keys stay O(k)).
    let lt = left;
    let gt = right;
    let i = left;
    while (i <= gt) {
      if (a[i] < pivot) swap(a, i++, lt++);
      else if (a[i] > pivot) swap(a, i, gt--);
      else i++;
    }
    if (r < lt) right = lt - 1;
    else if (r > gt) left = gt + 1;
    else return pivot;
  }
  return a[r];
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i];
  a[i] = a[j];
  a[j] = t;
}

/**
 * Second half of a counting sort into hash-grid buckets: `start[b + 1]` holds the count of bucket b on entry
 * (start[0] = 0); on return `start[b]` is the first slot of bucket b in `order`, which lists the objects i with
 * `bucketOf[i] ≥ 0` bucket by bucket. No allocation.
 */
/** Buckets of a hash grid over n objects: a power of two ≥ 16 and ≥ 2n (load ≤ 1/2), so `mask = nb − 1`. */
export function bucketCount(n: number): number {
  let nb = 16;
  while (nb < 2 * n) nb *= 2;
  return nb;
}

/** Bucket-start array for up to `capacity` objects (bucketCount + 1 sentinel); `current` when long enough. */
export function ensureBucketStarts(
  current: Int32Array<ArrayBuffer>,
  capacity: number,
): Int32Array<ArrayBuffer> {
  const nb = bucketCount(capacity);
  return current.length < nb + 1 ? new Int32Array(nb + 1) : current;
}

export function fillBuckets(
  n: number,
  nb: number,
  bucketOf: Int32Array,
  start: Int32Array,
  order: Int32Array,
): void {
  for (let b = 0; b < nb; b++) start[b + 1] += start[b];
  // Fill `order` using the starts as running cursors, then restore the starts.
  for (let i = 0; i < n; i++) {
    const b = bucketOf[i];
    if (b >= 0) order[start[b]++] = i;
  }
  for (let b = nb; b > 0; b--) start[b] = start[b - 1];
  start[0] = 0;
}
