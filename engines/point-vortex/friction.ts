/**
 * Mutual friction for straight vortex lines along ẑ (2D point vortices), applied in place to the superfluid
 * velocities v_s of each vortex.
 *
 * Method: Schwarz's equation with s′ = s_i ẑ (s_i = sign Γ_i) reduces in the plane to
 *   dr_i/dt = v_s,i + α s_i ẑ × (v_n − v_s,i) + α′ (v_n − v_s,i),
 * with v_n a uniform normal-fluid velocity and ẑ × (a, b) = (−b, a).
 *
 * References: K.W. Schwarz, Phys. Rev. B 38, 2398 (1988), doi:10.1103/PhysRevB.38.2398;
 * O. Törnkvist, E. Schröder, Phys. Rev. Lett. 78, 1908 (1997), doi:10.1103/PhysRevLett.78.1908.
 *
 * @example
 * ```ts
 * import { applyFriction } from "./friction.ts";
 * const g = Float64Array.of(1), u = Float64Array.of(1), v = Float64Array.of(0);
 * applyFriction(1, g, u, v, { alpha: 0.1, alphaPrime: 0, normalVelocity: [0, 0] });
 * // u = [1], v = [-0.1]
 * ```
 */

/** Friction coefficients (dimensionless) and the uniform normal-fluid velocity (length/time). */
export interface FrictionCoefficients {
  readonly alpha: number;
  readonly alphaPrime: number;
  readonly normalVelocity: readonly [number, number];
}

/** Replaces v_s by dr/dt for the first n vortices (in place); no allocation. */
export function applyFriction(
  n: number,
  g: Float64Array,
  u: Float64Array,
  v: Float64Array,
  f: FrictionCoefficients,
): void {
  const a = f.alpha, ap = f.alphaPrime, vnx = f.normalVelocity[0], vny = f.normalVelocity[1];
  for (let i = 0; i < n; i++) {
    const s = g[i] > 0 ? 1 : g[i] < 0 ? -1 : 0;
    const wx = vnx - u[i];
    const wy = vny - v[i];
    u[i] += -a * s * wy + ap * wx;
    v[i] += a * s * wx + ap * wy;
  }
}
