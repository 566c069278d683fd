/**
 * Vortex detection on the grid: phase winding around plaquettes, sub-grid positions, circulation sign.
 *
 * Method. The phase φ = arg ψ is taken at every grid point. For each plaquette with corners a = (i, j),
 * b = (i+1, j), c = (i+1, j+1), d = (i, j+1), counter-clockwise, the winding is w = (1/2π) Σ wrap(φ_next − φ) over
 * the four edges, each difference wrapped into (−π, π]; w ≠ 0 marks a vortex of circulation w (in κ). Only
 * plaquettes where the vortex-free ground-state density (mean of the corners) exceeds `threshold` × the bulk
 * density count, so the region at and beyond the trap wall, where the density vanishes and the phase is noise,
 * makes no false vortices. The position is the zero of the bilinear interpolant of ψ on the plaquette, found by
 * Newton's method from its centre (the interpolant is exact for the linear core ψ ∝ (x − x₀) ± i(y − y₀)); the
 * plaquette centre is used when Newton leaves the plaquette by more than half a cell. Periodic domains wrap
 * plaquettes across the grid edge; other domains skip the last row and column (zero density there).
 *
 * References: J. Tobochnik, G.V. Chester, Phys. Rev. B 20, 3761 (1979), doi:10.1103/PhysRevB.20.3761
 * (plaquette vorticity on a lattice); common practice in GP turbulence studies, e.g. T.P. Billam et al.,
 * Phys. Rev. Lett. 112, 145301 (2014), doi:10.1103/PhysRevLett.112.145301.
 */
import type { Grid } from "./grid.ts";

/** Detected vortices (struct of arrays; the first `count` entries are valid). */
export class Detections {
  count = 0;
  x = new Float64Array(64);
  y = new Float64Array(64);
  /** Winding number (circulation in κ), nonzero. */
  s = new Float64Array(64);

  push(x: number, y: number, s: number): void {
    if (this.count === this.x.length) {
      const grow = (a: Float64Array) => {
        const b = new Float64Array(2 * a.length);
        b.set(a);
        return b;
      };
      this.x = grow(this.x);
      this.y = grow(this.y);
      this.s = grow(this.s);
    }
    this.x[this.count] = x;
    this.y[this.count] = y;
    this.s[this.count] = s;
    this.count++;
  }
}

const TWO_PI = 2 * Math.PI;

function wrap(d: number): number {
  return d > Math.PI ? d - TWO_PI : d <= -Math.PI ? d + TWO_PI : d;
}

export class VortexDetector {
  readonly grid: Grid;
  readonly periodic: boolean;
  /** 1 where the plaquette with lower-left corner p counts. */
  readonly mask: Uint8Array;
  readonly #phase: Float64Array;

  /**
   * @param background vortex-free ground-state density per point
   * @param threshold fraction of the bulk density (the background's maximum) below which plaquettes are ignored
   */
  constructor(grid: Grid, background: Float64Array, threshold: number, periodic: boolean) {
    this.grid = grid;
    this.periodic = periodic;
    const n = grid.n;
    let bulk = 0;
    for (let p = 0; p < background.length; p++) bulk = Math.max(bulk, background[p]);
    const limit = threshold * bulk;
    this.mask = new Uint8Array(n * n);
    const last = periodic ? n : n - 1;
    for (let j = 0; j < last; j++) {
      const j1 = (j + 1) % n;
      for (let i = 0; i < last; i++) {
        const i1 = (i + 1) % n;
        const mean = 0.25 *
          (background[j * n + i] + background[j * n + i1] + background[j1 * n + i1] + background[j1 * n + i]);
        if (mean > limit) this.mask[j * n + i] = 1;
      }
    }
    this.#phase = new Float64Array(n * n);
  }

  /** Finds the vortices of ψ (interleaved complex) into `out` (cleared first); returns their number. */
  detect(psi: Float64Array, out: Detections): number {
    const n = this.grid.n, h = this.grid.h, phase = this.#phase, mask = this.mask;
    for (let p = 0; p < n * n; p++) phase[p] = Math.atan2(psi[2 * p + 1], psi[2 * p]);
    out.count = 0;
    for (let j = 0; j < n; j++) {
      const j1 = j + 1 === n ? 0 : j + 1;
      for (let i = 0; i < n; i++) {
        const a = j * n + i;
        if (mask[a] === 0) continue;
        const i1 = i + 1 === n ? 0 : i + 1;
        const b = j * n + i1, c = j1 * n + i1, d = j1 * n + i;
        const sum = wrap(phase[b] - phase[a]) + wrap(phase[c] - phase[b]) + wrap(phase[d] - phase[c]) +
          wrap(phase[a] - phase[d]);
        const w = Math.round(sum / TWO_PI);
        if (w === 0) continue;
        const [u, v] = bilinearZero(psi, a, b, c, d);
        out.push(this.grid.coordinate(i) + u * h, this.grid.coordinate(j) + v * h, w);
      }
    }
    return out.count;
  }
}

const uv: [number, number] = [0.5, 0.5];

/**
 * Zero (u, v) ∈ [−½, 3/2]² of the bilinear interpolant ψ(u, v) = ψ_a(1−u)(1−v) + ψ_b u(1−v) + ψ_c uv +
 * ψ_d (1−u)v, by Newton's method from (½, ½); (½, ½) when it does not converge there. The returned pair is
 * reused between calls.
 */
export function bilinearZero(
  psi: Float64Array,
  a: number,
  b: number,
  c: number,
  d: number,
): [number, number] {
  const ar = psi[2 * a], ai = psi[2 * a + 1], br = psi[2 * b], bi = psi[2 * b + 1];
  const cr = psi[2 * c], ci = psi[2 * c + 1], dr = psi[2 * d], di = psi[2 * d + 1];
  // ψ = A + B u + C v + D uv
  const Br = br - ar, Bi = bi - ai, Cr = dr - ar, Ci = di - ai;
  const Dr = ar - br + cr - dr, Di = ai - bi + ci - di;
  let u = 0.5, v = 0.5;
  for (let it = 0; it < 20; it++) {
    const fr = ar + Br * u + Cr * v + Dr * u * v, fi = ai + Bi * u + Ci * v + Di * u * v;
    const jur = Br + Dr * v, jui = Bi + Di * v, jvr = Cr + Dr * u, jvi = Ci + Di * u;
    const det = jur * jvi - jvr * jui;
    if (det === 0 || !Number.isFinite(det)) break;
    const du = (fr * jvi - fi * jvr) / det, dv = (jur * fi - jui * fr) / det;
    u -= du;
    v -= dv;
    if (Math.abs(du) + Math.abs(dv) < 1e-13) break;
  }
  if (!(u >= -0.5 && u <= 1.5 && v >= -0.5 && v <= 1.5)) {
    u = 0.5;
    v = 0.5;
  }
  uv[0] = u;
  uv[1] = v;
  return uv;
}
