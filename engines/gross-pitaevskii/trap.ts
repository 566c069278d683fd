/**
 * Trapping potentials on the grid: a flat-bottomed disk or square box with a smooth steep wall, or none
 * (periodic). V is in units of μ.
 *
 * Wall profiles (d = r for the disk, d = |x| and |y| separately for the box, d_w the wall position):
 *  - tanh:  V_w(d) = V₀·½[1 + tanh((d − d_w)/w)];
 *  - power: V_w(d) = V₀·min(1, (d/d_w)^p).
 * Disk: V = V_w(r). Box: V = V_w(|x|) + V_w(|y|) (so the wall is smooth along the sides and 2V₀ in the corners).
 *
 * References: flat-bottomed (box) traps of cold-atom experiments, A.L. Gaunt et al., Phys. Rev. Lett. 110, 200406
 * (2013), doi:10.1103/PhysRevLett.110.200406; steep power-law walls in GP studies, A.J. Groszek et al.,
 * Phys. Rev. A 93, 043614 (2016), doi:10.1103/PhysRevA.93.043614.
 */
import type { Grid } from "./grid.ts";
import type { GpTrap, GpWall } from "./params.ts";

/** Wall potential at distance measure d for a wall at dw (units of μ). */
export function wallPotential(wall: GpWall, d: number, dw: number): number {
  if (wall.profile === "tanh") return 0.5 * wall.height * (1 + Math.tanh((d - dw) / wall.width));
  return d >= dw ? wall.height : wall.height * Math.pow(d / dw, wall.exponent);
}

/** The potential V on every grid point (row-major, length n²). */
export function trapPotential(grid: Grid, trap: GpTrap): Float64Array {
  const n = grid.n;
  const v = new Float64Array(n * n);
  if (trap.kind === "periodic") return v;
  const x = Float64Array.from({ length: n }, (_, i) => grid.coordinate(i));
  if (trap.kind === "disk") {
    for (let j = 0; j < n; j++) {
      for (let i = 0; i < n; i++) {
        v[j * n + i] = wallPotential(trap.wall, Math.hypot(x[i], x[j]), trap.radius);
      }
    }
    return v;
  }
  const a = 0.5 * trap.side;
  const w = Float64Array.from(x, (xi) => wallPotential(trap.wall, Math.abs(xi), a));
  for (let j = 0; j < n; j++) {
    for (let i = 0; i < n; i++) v[j * n + i] = w[i] + w[j];
  }
  return v;
}

/** Wall position (disk radius or box half-side) in ξ; Infinity for a periodic domain. */
export function wallPosition(trap: GpTrap): number {
  return trap.kind === "disk" ? trap.radius : trap.kind === "box" ? 0.5 * trap.side : Infinity;
}
