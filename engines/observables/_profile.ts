/**
 * Radial profile kernels about a centre: vortex count per annulus (2D) and filament length per spherical shell
 * (3D), bins [k·w, (k+1)·w) for k < nb, plus everything beyond nb·w in entry nb ("outside").
 *
 * Method (3D, docs/methods.md §5.2): a straight segment a + s(b − a), s ∈ [0, 1], has |r(s)|² quadratic in s, so r is
 * monotone on each side of s* = −a·(b − a)/|b − a|² (clamped to [0, 1]). On each monotone piece the shell radii
 * jw crossed are solved for exactly (the smaller root on the decreasing piece, the larger on the increasing
 * one), and each sub-piece's length goes to the shell of its midpoint radius. The lengths of all sub-pieces add
 * up to the segment length, so Σ_k (length in shell k) + outside = total length to rounding.
 *
 * References: docs/methods.md §5.2 (profiles, splitting segments that cross shell faces); the root selection is
 * elementary geometry (common practice, no source).
 */

/** Area of annulus k of width w: π w² ((k+1)² − k²). */
export function annulusArea(k: number, w: number): number {
  return Math.PI * w * w * (2 * k + 1);
}

/** Volume of spherical shell k of width w: (4/3) π w³ ((k+1)³ − k³). */
export function shellVolume(k: number, w: number): number {
  return 4 / 3 * Math.PI * w * w * w * (3 * k * k + 3 * k + 1);
}

/**
 * Adds the length of segment a → b (coordinates relative to the centre) to `acc[k]` per shell k < nb, and the
 * length beyond nb·w to `acc[nb]`. `acc` has nb + 1 entries.
 */
export function addSegmentToShells(
  ax: number,
  ay: number,
  az: number,
  bx: number,
  by: number,
  bz: number,
  w: number,
  nb: number,
  acc: Float64Array,
): void {
  const dx = bx - ax, dy = by - ay, dz = bz - az;
  const l2 = dx * dx + dy * dy + dz * dz;
  if (!(l2 > 0)) return;
  const length = Math.sqrt(l2);
  const a2 = ax * ax + ay * ay + az * az;
  const ad = ax * dx + ay * dy + az * dz;
  let sMin = -ad / l2;
  if (sMin < 0) sMin = 0;
  else if (sMin > 1) sMin = 1;
  if (sMin > 0) addMonotone(0, sMin, -1, a2, ad, l2, length, w, nb, acc);
  if (sMin < 1) addMonotone(sMin, 1, 1, a2, ad, l2, length, w, nb, acc);
}

function radiusAt(s: number, a2: number, ad: number, l2: number): number {
  const r2 = a2 + 2 * s * ad + s * s * l2;
  return r2 > 0 ? Math.sqrt(r2) : 0;
}

/** Splits [s0, s1] (r monotone; direction −1 decreasing, +1 increasing) at the shell radii it crosses. */
function addMonotone(
  s0: number,
  s1: number,
  direction: number,
  a2: number,
  ad: number,
  l2: number,
  length: number,
  w: number,
  nb: number,
  acc: Float64Array,
): void {
  const r0 = radiusAt(s0, a2, ad, l2);
  const r1 = radiusAt(s1, a2, ad, l2);
  const lo = Math.min(r0, r1);
  const hi = Math.max(r0, r1);
  // Shell radii jw strictly inside (lo, hi), limited to j ≤ nb (beyond, everything is "outside").
  let jFirst = Math.floor(lo / w) + 1;
  let jLast = Math.ceil(hi / w) - 1;
  if (jFirst < 1) jFirst = 1;
  if (jLast > nb) jLast = nb;
  let s = s0;
  const count = jLast >= jFirst ? jLast - jFirst + 1 : 0;
  for (let q = 0; q < count; q++) {
    const j = direction > 0 ? jFirst + q : jLast - q;
    const radius = j * w;
    const disc = ad * ad - l2 * (a2 - radius * radius);
    const root = disc > 0 ? Math.sqrt(disc) : 0;
    let sc = (-ad + direction * root) / l2;
    if (sc < s) sc = s;
    else if (sc > s1) sc = s1;
    addPiece(s, sc, a2, ad, l2, length, w, nb, acc);
    s = sc;
  }
  addPiece(s, s1, a2, ad, l2, length, w, nb, acc);
}

function addPiece(
  s0: number,
  s1: number,
  a2: number,
  ad: number,
  l2: number,
  length: number,
  w: number,
  nb: number,
  acc: Float64Array,
): void {
  if (!(s1 > s0)) return;
  let k = Math.floor(radiusAt(0.5 * (s0 + s1), a2, ad, l2) / w);
  if (k > nb) k = nb;
  acc[k] += (s1 - s0) * length;
}
