/**
 * Desingularised Biot–Savart velocity of filament points (Schwarz model): the local term and the nonlocal sum
 * over straight segments, by direct summation (O(N²)); the tree code is in `tree.ts`.
 *
 * Method. The velocity of point i is
 *   v_i = (κ/4π) ln(2√(ℓ₋ℓ₊)/(e^{1/4} a₀)) s′×s″ + (κ/4π) Σ′_j ∫_seg j (s − s_i)×ds/|s − s_i|³,
 * where ℓ∓ are the lengths of the two segments adjacent to i and Σ′ skips those two segments. Each segment
 * integral is exact for a straight segment A→B: with r₁ = P − A, r₂ = P − B,
 *   u = (κ/4π) (r₁×r₂)(|r₁| + |r₂|) / (|r₁||r₂|(|r₁||r₂| + r₁·r₂)),
 * an algebraically equivalent form of the textbook formula that vanishes exactly for collinear points outside
 * the segment; when r₁·r₂ < 0 the factor |r₁||r₂| + r₁·r₂ is evaluated as |r₁×r₂|²/(|r₁||r₂| − r₁·r₂) to
 * avoid cancellation for targets close to a long segment. With straight-segment sums the thin-ring speed is
 * (κ/4πR)[ln(8R/a₀) − β] with β = 3/4 − γ_E (not the continuum 1/4): see docs/check-values.md §3.2.
 *
 * The local induction approximation (LIA) option replaces everything by β_i s′×s″ with
 * β_i = (κ/4π) ln(8R_i/(e^{1/4}a₀)), R_i = 1/|s″_i| the local curvature radius, so that an isolated ring moves
 * at the solid-core speed (κ/4πR)[ln(8R/a₀) − 1/4] exactly.
 *
 * Periodic cube of side L: every segment is taken at its minimum image relative to the target (by its
 * midpoint) plus the 26 neighbouring copies, i.e. all segment images whose midpoints lie in the cube of side 3L
 * centred on the target; only the minimum-image copies of the target's own two segments are skipped.
 *
 * Sums: velocity sums are dominated by the nearest segments; plain summation (error ≤ N·ε·Σ|terms|) is used
 * in these hot loops. Diagnostics use compensated sums.
 *
 * References: K.W. Schwarz, Phys. Rev. B 31, 5782 (1985), doi:10.1103/PhysRevB.31.5782; Phys. Rev. B 38,
 * 2398 (1988), doi:10.1103/PhysRevB.38.2398; J. Katz, A. Plotkin, Low-Speed Aerodynamics, 2nd ed. (CUP,
 * 2001), §2.3.2 (straight vortex segment), doi:10.1017/CBO9780511810329; R.J. Donnelly, Quantized Vortices in
 * Helium II (CUP, 1991) (ring speed, core models).
 *
 * @example
 * ```ts
 * import { nonlocalDirect } from "./biot_savart.ts";
 * // nonlocalDirect(n, x, y, z, prev, g.dx, g.dy, g.dz, kappa / (4 * Math.PI), vx, vy, vz);
 * ```
 */

/** e^{1/4}. */
export const E_QUARTER = Math.exp(0.25);

/**
 * Ring constant β of this implementation: a thin ring moves at (κ/4πR)[ln(8R/a₀) − β] with β = 3/4 − γ_E for
 * the straight-segment Biot–Savart sum (docs/check-values.md §3.2) and β = 1/4 under the LIA option.
 */
export function ringConstant(model: "biot-savart" | "lia"): number {
  return model === "lia" ? 0.25 : 0.75 - 0.5772156649015329;
}

/**
 * Adds to (vx, vy, vz) the local term (κ/4π) ln(2√(ℓ₋ℓ₊)/(e^{1/4}a₀)) t×c at points i0 … i1 − 1.
 * `cf` = κ/4π; t, c, len from `computeGeometry`.
 */
export function addLocalTerm(
  i0: number,
  i1: number,
  prev: Int32Array,
  tx: Float64Array,
  ty: Float64Array,
  tz: Float64Array,
  cx: Float64Array,
  cy: Float64Array,
  cz: Float64Array,
  len: Float64Array,
  cf: number,
  a0: number,
  vx: Float64Array,
  vy: Float64Array,
  vz: Float64Array,
): void {
  const scale = 2 / (E_QUARTER * a0);
  for (let i = i0; i < i1; i++) {
    const beta = cf * Math.log(scale * Math.sqrt(len[i] * len[prev[i]]));
    vx[i] += beta * (ty[i] * cz[i] - tz[i] * cy[i]);
    vy[i] += beta * (tz[i] * cx[i] - tx[i] * cz[i]);
    vz[i] += beta * (tx[i] * cy[i] - ty[i] * cx[i]);
  }
}

/** Adds the LIA velocity β_i t×c with β_i = (κ/4π) ln(8/(e^{1/4} a₀ |c|)) (zero where c = 0). */
export function addLiaTerm(
  n: number,
  tx: Float64Array,
  ty: Float64Array,
  tz: Float64Array,
  cx: Float64Array,
  cy: Float64Array,
  cz: Float64Array,
  cf: number,
  a0: number,
  vx: Float64Array,
  vy: Float64Array,
  vz: Float64Array,
): void {
  const scale = 8 / (E_QUARTER * a0);
  for (let i = 0; i < n; i++) {
    const k = Math.sqrt(cx[i] * cx[i] + cy[i] * cy[i] + cz[i] * cz[i]);
    if (k === 0) continue;
    const beta = cf * Math.log(scale / k);
    vx[i] += beta * (ty[i] * cz[i] - tz[i] * cy[i]);
    vy[i] += beta * (tz[i] * cx[i] - tx[i] * cz[i]);
    vz[i] += beta * (tx[i] * cy[i] - ty[i] * cx[i]);
  }
}

/**
 * Adds the nonlocal velocity at every point of an unbounded domain by the direct straight-segment sum,
 * skipping the point's own segments (i→next[i] and prev[i]→i). Segment j runs from point j along (dx, dy, dz).
 */
export function nonlocalDirect(
  n: number,
  x: Float64Array,
  y: Float64Array,
  z: Float64Array,
  prev: Int32Array,
  dx: Float64Array,
  dy: Float64Array,
  dz: Float64Array,
  cf: number,
  vx: Float64Array,
  vy: Float64Array,
  vz: Float64Array,
): void {
  for (let i = 0; i < n; i++) {
    const px = x[i], py = y[i], pz = z[i];
    const pi = prev[i];
    let ux = 0, uy = 0, uz = 0;
    for (let j = 0; j < n; j++) {
      if (j === i || j === pi) continue;
      const r1x = px - x[j], r1y = py - y[j], r1z = pz - z[j];
      const r2x = r1x - dx[j], r2y = r1y - dy[j], r2z = r1z - dz[j];
      const n1 = Math.sqrt(r1x * r1x + r1y * r1y + r1z * r1z);
      const n2 = Math.sqrt(r2x * r2x + r2y * r2y + r2z * r2z);
      const nn = n1 * n2;
      const cx = r1y * r2z - r1z * r2y, cy = r1z * r2x - r1x * r2z, cz = r1x * r2y - r1y * r2x;
      const dot = r1x * r2x + r1y * r2y + r1z * r2z;
      // nn + dot, without cancellation when dot < 0: (nn² − dot²)/(nn − dot) = |r₁×r₂|²/(nn − dot)
      const q = dot >= 0 ? nn + dot : (cx * cx + cy * cy + cz * cz) / (nn - dot);
      const den = nn * q;
      if (!(den > 0)) continue; // target on the segment itself
      const f = (n1 + n2) / den;
      ux += f * cx;
      uy += f * cy;
      uz += f * cz;
    }
    vx[i] += cf * ux;
    vy[i] += cf * uy;
    vz[i] += cf * uz;
  }
}

/**
 * Periodic-cube version of `nonlocalDirect` (side L): minimum image of each segment relative to the target
 * plus the 26 neighbouring copies; only the minimum-image copies of the target's own segments are skipped.
 */
export function nonlocalDirectPeriodic(
  n: number,
  x: Float64Array,
  y: Float64Array,
  z: Float64Array,
  prev: Int32Array,
  dx: Float64Array,
  dy: Float64Array,
  dz: Float64Array,
  L: number,
  cf: number,
  vx: Float64Array,
  vy: Float64Array,
  vz: Float64Array,
): void {
  for (let i = 0; i < n; i++) {
    const px = x[i], py = y[i], pz = z[i];
    const pi = prev[i];
    let ux = 0, uy = 0, uz = 0;
    for (let j = 0; j < n; j++) {
      const own = j === i || j === pi;
      // Minimum image of the segment midpoint relative to the target.
      let ax = px - x[j], ay = py - y[j], az = pz - z[j];
      ax -= L * Math.round((ax - 0.5 * dx[j]) / L);
      ay -= L * Math.round((ay - 0.5 * dy[j]) / L);
      az -= L * Math.round((az - 0.5 * dz[j]) / L);
      for (let a = -1; a <= 1; a++) {
        for (let b = -1; b <= 1; b++) {
          for (let c = -1; c <= 1; c++) {
            if (own && a === 0 && b === 0 && c === 0) continue;
            const r1x = ax + a * L, r1y = ay + b * L, r1z = az + c * L;
            const r2x = r1x - dx[j], r2y = r1y - dy[j], r2z = r1z - dz[j];
            const n1 = Math.sqrt(r1x * r1x + r1y * r1y + r1z * r1z);
            const n2 = Math.sqrt(r2x * r2x + r2y * r2y + r2z * r2z);
            const nn = n1 * n2;
            const cx = r1y * r2z - r1z * r2y, cy = r1z * r2x - r1x * r2z, cz = r1x * r2y - r1y * r2x;
            const dot = r1x * r2x + r1y * r2y + r1z * r2z;
            const q = dot >= 0 ? nn + dot : (cx * cx + cy * cy + cz * cz) / (nn - dot);
            const den = nn * q;
            if (!(den > 0)) continue;
            const f = (n1 + n2) / den;
            ux += f * cx;
            uy += f * cy;
            uz += f * cz;
          }
        }
      }
    }
    vx[i] += cf * ux;
    vy[i] += cf * uy;
    vz[i] += cf * uz;
  }
}

/** Velocity induced at (px, py, pz) by one straight segment from A along d, without the factor κ/4π. */
export function segmentVelocity(
  px: number,
  py: number,
  pz: number,
  ax: number,
  ay: number,
  az: number,
  dx: number,
  dy: number,
  dz: number,
  out: Float64Array,
): void {
  const r1x = px - ax, r1y = py - ay, r1z = pz - az;
  const r2x = r1x - dx, r2y = r1y - dy, r2z = r1z - dz;
  const n1 = Math.sqrt(r1x * r1x + r1y * r1y + r1z * r1z);
  const n2 = Math.sqrt(r2x * r2x + r2y * r2y + r2z * r2z);
  const nn = n1 * n2;
  const cx = r1y * r2z - r1z * r2y, cy = r1z * r2x - r1x * r2z, cz = r1x * r2y - r1y * r2x;
  const dot = r1x * r2x + r1y * r2y + r1z * r2z;
  const q = dot >= 0 ? nn + dot : (cx * cx + cy * cy + cz * cz) / (nn - dot);
  const den = nn * q;
  if (!(den > 0)) {
    out[0] = out[1] = out[2] = 0;
    return;
  }
  const f = (n1 + n2) / den;
  out[0] = f * cx;
  out[1] = f * cy;
  out[2] = f * cz;
}
