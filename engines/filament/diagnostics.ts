/**
 * Diagnostics of a filament tangle: line length, impulse, energy, loop count.
 *
 * Method.
 * - Line length L = Σ |Δs_i| (Neumaier-compensated).
 * - Impulse per unit superfluid density P = (κ/2) ∮ s×ds = (κ/2) Σ_i s_i×s_{i+1} (exact for a polygon), with
 *   each loop made continuous by following minimum-image links from its first point's unwrapped position. In
 *   a periodic box it is meaningful only for loops that do not wind around the box.
 * - Energy per unit superfluid density, desingularised:
 *     E = (κ²/8π) [ Σ_i Σ_{j≠i} Δs_i·Δs_j/|m_i − m_j| + Σ_i 2ℓ_i ln(2e^{1/4} ℓ_i/a₀) ],
 *   a midpoint-rule double sum plus a self term per segment. The self-term constant is chosen (derived here)
 *   so that a finely resolved ring has E = ½κ²R[ln(8R/a₀) − C_E] with C_E = β + 1 and β = 3/4 − γ_E the ring
 *   constant of the straight-segment velocity, i.e. the fixed-core consistency U = ∂E/∂P of docs/check-values.md §3.4.
 *   The double sum is direct (O(N²)) or by the tree's vector potential (the engine uses θ/2 for it). In a periodic box it uses the same
 *   images as the velocity (minimum image + 26 copies) — only its changes are meaningful there.
 *
 * References: P.G. Saffman, Vortex Dynamics (CUP, 1992), §10.2 (ring energy and impulse),
 * doi:10.1017/CBO9780511624063; A. Neumaier, ZAMM 54, 39 (1974), doi:10.1002/zamm.19740540106.
 *
 * @example
 * ```ts
 * import { lineLength } from "./diagnostics.ts";
 * // lineLength(g.len, n)
 * ```
 */
import { E_QUARTER } from "./biot_savart.ts";
import type { Geometry } from "./geometry.ts";
import type { FilamentState } from "./state.ts";
import type { SegmentTree } from "./tree.ts";

/** Neumaier-compensated running sum. */
export class CompensatedSum {
  sum = 0;
  c = 0;
  reset(): void {
    this.sum = 0;
    this.c = 0;
  }
  add(v: number): void {
    const t = this.sum + v;
    this.c += Math.abs(this.sum) >= Math.abs(v) ? (this.sum - t) + v : (v - t) + this.sum;
    this.sum = t;
  }
  value(): number {
    return this.sum + this.c;
  }
}

/** Total length of the first n segment lengths. */
export function lineLength(len: Float64Array, n: number): number {
  const s = new CompensatedSum();
  for (let i = 0; i < n; i++) s.add(len[i]);
  return s.value();
}

/** Impulse (κ/2)∮s×ds per loop and in total. */
export interface Impulse {
  readonly x: number;
  readonly y: number;
  readonly z: number;
  /** Σ over loops of |P_loop| (a scale for relative drifts). */
  readonly loopMagnitudeSum: number;
}

/** Impulse of a compact state (geometry `g` must hold its segment vectors). */
export function impulse(state: FilamentState, g: Geometry, kappa: number, boxSize: number): Impulse {
  const L = boxSize;
  const sx = new CompensatedSum(), sy = new CompensatedSum(), sz = new CompensatedSum();
  let mag = 0;
  for (let k = 0; k < state.nLoops; k++) {
    const s0 = state.loopStart[k], m = state.loopLen[k];
    let ux = state.x[s0] + L * state.imx[s0],
      uy = state.y[s0] + L * state.imy[s0],
      uz = state.z[s0] + L * state.imz[s0];
    let px = 0, py = 0, pz = 0;
    for (let q = 0; q < m; q++) {
      const i = s0 + q;
      const dx = g.dx[i], dy = g.dy[i], dz = g.dz[i];
      // s_i × (s_i + d) = s_i × d
      px += uy * dz - uz * dy;
      py += uz * dx - ux * dz;
      pz += ux * dy - uy * dx;
      ux += dx;
      uy += dy;
      uz += dz;
    }
    px *= 0.5 * kappa;
    py *= 0.5 * kappa;
    pz *= 0.5 * kappa;
    sx.add(px);
    sy.add(py);
    sz.add(pz);
    mag += Math.sqrt(px * px + py * py + pz * pz);
  }
  return { x: sx.value(), y: sy.value(), z: sz.value(), loopMagnitudeSum: mag };
}

/** Work arrays for the energy. */
export class EnergyWork {
  cap = 0;
  mx = new Float64Array(0);
  my = new Float64Array(0);
  mz = new Float64Array(0);
  ax = new Float64Array(0);
  ay = new Float64Array(0);
  az = new Float64Array(0);
  ensure(n: number): void {
    if (n <= this.cap) return;
    let c = Math.max(64, this.cap);
    while (c < n) c *= 2;
    this.mx = new Float64Array(c);
    this.my = new Float64Array(c);
    this.mz = new Float64Array(c);
    this.ax = new Float64Array(c);
    this.ay = new Float64Array(c);
    this.az = new Float64Array(c);
    this.cap = c;
  }
}

/**
 * Desingularised energy per unit superfluid density (see module doc). With `tree` non-null the double sum
 * uses the tree's vector potential (the tree is rebuilt here from `g`).
 */
export function energy(
  state: FilamentState,
  g: Geometry,
  opts: {
    kappa: number;
    coreRadius: number;
    boxSize: number;
    tree: SegmentTree | null;
    theta: number;
    leafSize: number;
  },
  work: EnergyWork,
): number {
  const n = state.n;
  const L = opts.boxSize;
  work.ensure(n);
  const { mx, my, mz, ax, ay, az } = work;
  const { dx, dy, dz, len } = g;
  for (let i = 0; i < n; i++) {
    mx[i] = state.x[i] + 0.5 * dx[i];
    my[i] = state.y[i] + 0.5 * dy[i];
    mz[i] = state.z[i] + 0.5 * dz[i];
  }
  if (opts.tree !== null) {
    opts.tree.build(n, state.x, state.y, state.z, dx, dy, dz, len, L, opts.leafSize);
    opts.tree.potentialAtMidpoints(n, opts.theta, ax, ay, az);
  } else {
    for (let i = 0; i < n; i++) {
      let sx = 0, sy = 0, sz = 0;
      const px = mx[i], py = my[i], pz = mz[i];
      for (let j = 0; j < n; j++) {
        let rx = px - mx[j], ry = py - my[j], rz = pz - mz[j];
        if (L > 0) {
          rx -= L * Math.round(rx / L);
          ry -= L * Math.round(ry / L);
          rz -= L * Math.round(rz / L);
          for (let a = -1; a <= 1; a++) {
            for (let b = -1; b <= 1; b++) {
              for (let c = -1; c <= 1; c++) {
                if (j === i && a === 0 && b === 0 && c === 0) continue;
                const qx = rx + a * L, qy = ry + b * L, qz = rz + c * L;
                const ir = 1 / Math.sqrt(qx * qx + qy * qy + qz * qz);
                sx += dx[j] * ir;
                sy += dy[j] * ir;
                sz += dz[j] * ir;
              }
            }
          }
        } else {
          if (j === i) continue;
          const ir = 1 / Math.sqrt(rx * rx + ry * ry + rz * rz);
          sx += dx[j] * ir;
          sy += dy[j] * ir;
          sz += dz[j] * ir;
        }
      }
      ax[i] = sx;
      ay[i] = sy;
      az[i] = sz;
    }
  }
  const total = new CompensatedSum();
  const selfScale = 2 * E_QUARTER / opts.coreRadius;
  for (let i = 0; i < n; i++) {
    total.add(dx[i] * ax[i] + dy[i] * ay[i] + dz[i] * az[i]);
    total.add(2 * len[i] * Math.log(selfScale * len[i]));
  }
  return opts.kappa * opts.kappa / (8 * Math.PI) * total.value();
}
