/**
 * Downsampled density and phase images of a GP state for the report.
 *
 * Method: the grid is cut into s × s blocks (s = n/resolution); the density is the block mean of |ψ|² (n₀), the
 * phase is arg of the block mean of ψ (radians in (−π, π]), so a block that holds a vortex core shows a phase
 * with little meaning but the density shows the hole. Each grid point stands for an h × h cell, so the image
 * covers [−L/2 − h/2, L/2 − h/2)².
 */
import type { FieldSnapshot } from "../contract.ts";
import type { Grid } from "./grid.ts";

/** Field names and meanings (the engine's `capabilities.snapshots`). */
export const SNAPSHOT_FIELDS = {
  density: "condensate density |ψ|², block mean, in n₀ (the bulk density at μ)",
  phase: "condensate phase arg ψ of the block-mean ψ, in radians (−π, π]",
} as const;

/** A new snapshot of ψ at `resolution` pixels per side (a power of two dividing the grid size). */
export function fieldSnapshot(
  grid: Grid,
  psi: Float64Array,
  resolution: number,
  frameIndex: number,
  t: number,
): FieldSnapshot {
  const n = grid.n, s = n / resolution, r = resolution;
  const density = new Float32Array(r * r), phase = new Float32Array(r * r);
  const inv = 1 / (s * s);
  for (let by = 0; by < r; by++) {
    for (let bx = 0; bx < r; bx++) {
      let rho = 0, re = 0, im = 0;
      for (let j = by * s; j < (by + 1) * s; j++) {
        for (let i = bx * s; i < (bx + 1) * s; i++) {
          const p = 2 * (j * n + i);
          rho += psi[p] * psi[p] + psi[p + 1] * psi[p + 1];
          re += psi[p];
          im += psi[p + 1];
        }
      }
      density[by * r + bx] = rho * inv;
      phase[by * r + bx] = Math.atan2(im, re);
    }
  }
  const x0 = grid.coordinate(0) - 0.5 * grid.h;
  return {
    frameIndex,
    t,
    nx: r,
    ny: r,
    x0,
    y0: x0,
    dx: s * grid.h,
    dy: s * grid.h,
    fields: { density, phase },
  };
}
