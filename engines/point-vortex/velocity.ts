/**
 * Point-vortex velocity kernels for the unbounded plane and the disk (direct O(N²) sums).
 *
 * Method: each pair (i < j) is visited once; the Cauchy kernel 1/(z_i − z_j) is computed once and added
 * antisymmetrically to both vortices, so Σ Γ_i ż_i = 0 holds to roundoff (linear impulse conserved).
 * We accumulate S_i = Σ_j Γ_j/(z_i − z_j) [− image terms] and use u − iv = S/(2πi), i.e. u = Im S/2π,
 * v = Re S/2π. In a disk of radius R, vortex j has an image −Γ_j at R²/z̄_j (circle theorem); its term
 * −Γ_j/(z_i − R²/z̄_j) = −Γ_j z̄_j/(z_i z̄_j − R²) is regular at z_j = 0 (image at infinity contributes 0), and
 * the pair (i, j) shares D = z_i z̄_j − R², since z_j z̄_i − R² = conj(D). Each vortex also feels its own
 * image, Γ_i z̄_i/(R² − |z_i|²).
 *
 * Each kernel returns the smallest squared distance it saw (between vortices, and in a disk also between a
 * vortex and its own image), which sets the step cap of the integrator. No allocation.
 *
 * References: P.G. Saffman, Vortex Dynamics (CUP 1992) §7.1–7.3, doi:10.1017/CBO9780511624063;
 * H. Aref, Annu. Rev. Fluid Mech. 15, 345 (1983), doi:10.1146/annurev.fl.15.010183.002021;
 * L.M. Milne-Thomson, Theoretical Hydrodynamics (Macmillan 1968) §6.21 (circle theorem).
 *
 * @example
 * ```ts
 * import { velocityUnbounded } from "./velocity.ts";
 * const x = Float64Array.of(-0.5, 0.5), y = Float64Array.of(0, 0), g = Float64Array.of(1, -1);
 * const u = new Float64Array(2), v = new Float64Array(2);
 * velocityUnbounded(2, x, y, g, u, v); // dipole: v = [1/(2π), 1/(2π)], u = [0, 0]
 * ```
 */

const INV_TWO_PI = 1 / (2 * Math.PI);

/**
 * Velocities (u, v) of n vortices in the unbounded plane; returns the minimum squared pair distance
 * (Infinity when n < 2).
 */
export function velocityUnbounded(
  n: number,
  x: Float64Array,
  y: Float64Array,
  g: Float64Array,
  u: Float64Array,
  v: Float64Array,
): number {
  u.fill(0, 0, n);
  v.fill(0, 0, n);
  let minR2 = Infinity;
  for (let i = 0; i < n; i++) {
    const xi = x[i], yi = y[i], gi = g[i];
    let sRe = 0, sIm = 0;
    for (let j = i + 1; j < n; j++) {
      const dx = xi - x[j];
      const dy = yi - y[j];
      const r2 = dx * dx + dy * dy;
      if (r2 < minR2) minR2 = r2;
      const inv = 1 / r2;
      const cRe = dx * inv; // Re 1/(z_i − z_j)
      const cIm = -dy * inv; // Im 1/(z_i − z_j)
      const gj = g[j];
      sRe += gj * cRe;
      sIm += gj * cIm;
      v[j] -= gi * cRe;
      u[j] -= gi * cIm;
    }
    v[i] += sRe;
    u[i] += sIm;
  }
  for (let i = 0; i < n; i++) {
    u[i] *= INV_TWO_PI;
    v[i] *= INV_TWO_PI;
  }
  return minR2;
}

/**
 * Velocities (u, v) of n vortices inside a disk of radius `radius` centred at the origin (method of images,
 * own image included); returns the minimum squared distance between two vortices or a vortex and its image.
 */
export function velocityDisk(
  n: number,
  x: Float64Array,
  y: Float64Array,
  g: Float64Array,
  radius: number,
  u: Float64Array,
  v: Float64Array,
): number {
  u.fill(0, 0, n);
  v.fill(0, 0, n);
  const r2w = radius * radius;
  let minR2 = Infinity;
  for (let i = 0; i < n; i++) {
    const xi = x[i], yi = y[i], gi = g[i];
    // Own image: S_i += Γ_i z̄_i / (R² − |z_i|²).
    const ri2 = xi * xi + yi * yi;
    const gap = r2w - ri2;
    let sRe = gi * xi / gap;
    let sIm = -gi * yi / gap;
    if (ri2 > 0) {
      const dImg2 = gap * gap / ri2; // |z_i − R²/z̄_i|²
      if (dImg2 < minR2) minR2 = dImg2;
    }
    for (let j = i + 1; j < n; j++) {
      const xj = x[j], yj = y[j], gj = g[j];
      const dx = xi - xj;
      const dy = yi - yj;
      const r2 = dx * dx + dy * dy;
      if (r2 < minR2) minR2 = r2;
      const inv = 1 / r2;
      const cRe = dx * inv;
      const cIm = -dy * inv;
      // D = z_i z̄_j − R²
      const dRe = xi * xj + yi * yj - r2w;
      const dIm = yi * xj - xi * yj;
      const invD = 1 / (dRe * dRe + dIm * dIm);
      // on i: −Γ_j z̄_j D̄ / |D|² = −Γ_j conj(z_j D) / |D|²
      const aRe = (xj * dRe - yj * dIm) * invD;
      const aIm = (xj * dIm + yj * dRe) * invD;
      // on j: −Γ_i z̄_i D / |D|²
      const bRe = (xi * dRe + yi * dIm) * invD;
      const bIm = (xi * dIm - yi * dRe) * invD;
      sRe += gj * (cRe - aRe);
      sIm += gj * (cIm + aIm);
      v[j] -= gi * (cRe + bRe);
      u[j] -= gi * (cIm + bIm);
    }
    v[i] += sRe;
    u[i] += sIm;
  }
  for (let i = 0; i < n; i++) {
    u[i] *= INV_TWO_PI;
    v[i] *= INV_TWO_PI;
  }
  return minR2;
}
