/**
 * Windowed near field of the nonlocal Biot–Savart sum: the contribution of segments whose midpoint lies within
 * a distance 2r_w of the target point, weighted by a smooth window φ(r/r_w) (1 up to r_w, then a smoothstep
 * down to 0 at 2r_w), own segments excluded. The multirate stepper (`simulation.ts`) integrates this part with
 * the local term at the fast rate; the remainder (nonlocal sum minus windowed near field) varies smoothly in
 * space and time and is extrapolated. The window is smooth in the positions, so remeshing and reconnections
 * change the split only through the changed segments themselves.
 *
 * Pairs are found once per step with a cell list of cell size 2r_w + skin (Verlet list); within the step no
 * point pair moves closer by more than the skin (the advective step limit), so no pair inside 2r_w is missed.
 *
 * References: L. Verlet, Phys. Rev. 159, 98 (1967), doi:10.1103/PhysRev.159.98 (neighbour lists); the
 * straight-segment formula as in `biot_savart.ts`; the window split is common practice (no source).
 *
 * @example
 * ```ts
 * import { NearField } from "./near.ts";
 * const near = new NearField();
 * // near.build(n, x, y, z, prev, 0, 1.5 * delta, 0.5 * delta);
 * // near.add(n, x, y, z, g.dx, g.dy, g.dz, kappa / (4 * Math.PI), vx, vy, vz);
 * ```
 */

import { CellHash } from "./_cell_hash.ts";

/** Smooth window: 1 for q ≤ 1, 1 − s²(3 − 2s) with s = q − 1 for 1 < q < 2, 0 beyond. */
export function nearWindow(q: number): number {
  if (q <= 1) return 1;
  if (q >= 2) return 0;
  const s = q - 1;
  return 1 - s * s * (3 - 2 * s);
}

/** Verlet list of (point, segment) pairs and the windowed near-field sum. */
export class NearField {
  /** CSR: pairs of point i are seg[start[i] … start[i + 1]). */
  start = new Int32Array(1);
  seg = new Int32Array(0);
  radius = 0;
  boxSize = 0;
  private readonly cells = new CellHash();
  private mx = new Float64Array(0);
  private my = new Float64Array(0);
  private mz = new Float64Array(0);
  private cellNext = new Int32Array(0);

  /**
   * Lists, for every point i, the segments j (j ≠ i, prev[i]) whose midpoints lie within 2r_w + skin of it
   * (minimum image in a periodic box of side L > 0).
   */
  build(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    next: Int32Array,
    prev: Int32Array,
    boxSize: number,
    rw: number,
    skin: number,
  ): void {
    this.radius = rw;
    this.boxSize = boxSize;
    const L = boxSize;
    const R = 2 * rw + skin, R2 = R * R;
    if (this.start.length < n + 1) this.start = new Int32Array(2 * n + 1);
    if (this.cellNext.length < n) this.cellNext = new Int32Array(2 * n);
    let nc = L > 0 ? Math.max(1, Math.floor(L / R)) : 0;
    if (nc === 2) nc = 1; // with fewer than 3 cells per side one cell holds everything
    const cs = L > 0 ? L / nc : R;
    const cells = this.cells, nxt = this.cellNext;
    cells.reset(n, nc);
    const head = cells.head;
    // Segment midpoints (minimum image of the segment vector in a periodic box).
    if (this.mx.length < n) {
      this.mx = new Float64Array(2 * n);
      this.my = new Float64Array(2 * n);
      this.mz = new Float64Array(2 * n);
    }
    const { mx, my, mz } = this;
    for (let j = 0; j < n; j++) {
      const k = next[j];
      let ex = x[k] - x[j], ey = y[k] - y[j], ez = z[k] - z[j];
      if (L > 0) {
        ex -= L * Math.round(ex / L);
        ey -= L * Math.round(ey / L);
        ez -= L * Math.round(ez / L);
      }
      mx[j] = x[j] + 0.5 * ex;
      my[j] = y[j] + 0.5 * ey;
      mz[j] = z[j] + 0.5 * ez;
    }
    for (let j = n - 1; j >= 0; j--) {
      const slot = cells.slot(Math.floor(mx[j] / cs), Math.floor(my[j] / cs), Math.floor(mz[j] / cs), true);
      cells.claim(slot);
      nxt[j] = head[slot];
      head[slot] = j;
    }
    const span = nc === 1 ? 0 : 1;
    let count = 0;
    this.start[0] = 0;
    for (let i = 0; i < n; i++) {
      const ix = Math.floor(x[i] / cs), iy = Math.floor(y[i] / cs), iz = Math.floor(z[i] / cs);
      const p = prev[i];
      for (let a = -span; a <= span; a++) {
        for (let b = -span; b <= span; b++) {
          for (let c = -span; c <= span; c++) {
            const slot = cells.slot(ix + a, iy + b, iz + c, false);
            if (slot < 0) continue;
            for (let j = head[slot]; j >= 0; j = nxt[j]) {
              if (j === i || j === p) continue;
              let ex = mx[j] - x[i], ey = my[j] - y[i], ez = mz[j] - z[i];
              if (L > 0) {
                ex -= L * Math.round(ex / L);
                ey -= L * Math.round(ey / L);
                ez -= L * Math.round(ez / L);
              }
              if (ex * ex + ey * ey + ez * ez >= R2) continue;
              if (count >= this.seg.length) {
                const g = new Int32Array(Math.max(1024, 2 * this.seg.length));
                g.set(this.seg);
                this.seg = g;
              }
              this.seg[count++] = j;
            }
          }
        }
      }
      this.start[i + 1] = count;
    }
  }

  /** Number of listed pairs. */
  get pairs(): number {
    return this.start.length > 0 ? this.start[this.start.length - 1] : 0;
  }

  /**
   * Adds cf·Σ_j φ(|x_i − m_j|/r_w) u_j(x_i) over the listed segments j (segment vectors d from the geometry of
   * the same positions; midpoint m_j = x_j + d_j/2) to (vx, vy, vz). `sign` −1 subtracts.
   */
  add(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    dx: Float64Array,
    dy: Float64Array,
    dz: Float64Array,
    cf: number,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): void {
    const L = this.boxSize, iw = 1 / this.radius, outer2 = 4 * this.radius * this.radius;
    const st = this.start, seg = this.seg;
    for (let i = 0; i < n; i++) {
      const px = x[i], py = y[i], pz = z[i];
      let ux = 0, uy = 0, uz = 0;
      for (let q = st[i]; q < st[i + 1]; q++) {
        const j = seg[q];
        let r1x = px - x[j], r1y = py - y[j], r1z = pz - z[j];
        const ex = dx[j], ey = dy[j], ez = dz[j];
        if (L > 0) {
          // minimum image of the midpoint
          const ox = L * Math.round((r1x - 0.5 * ex) / L), oy = L * Math.round((r1y - 0.5 * ey) / L);
          const oz = L * Math.round((r1z - 0.5 * ez) / L);
          r1x -= ox;
          r1y -= oy;
          r1z -= oz;
        }
        const mx = r1x - 0.5 * ex, my = r1y - 0.5 * ey, mz = r1z - 0.5 * ez;
        const m2 = mx * mx + my * my + mz * mz;
        if (m2 >= outer2) continue; // beyond 2r_w (most of the list: its skin): weight 0
        const w = nearWindow(Math.sqrt(m2) * iw);
        if (w === 0) continue;
        const r2x = r1x - ex, r2y = r1y - ey, r2z = r1z - ez;
        const n1 = Math.sqrt(r1x * r1x + r1y * r1y + r1z * r1z);
        const n2 = Math.sqrt(r2x * r2x + r2y * r2y + r2z * r2z);
        const nn = n1 * n2;
        const cx = r1y * r2z - r1z * r2y, cy = r1z * r2x - r1x * r2z, cz = r1x * r2y - r1y * r2x;
        const dot = r1x * r2x + r1y * r2y + r1z * r2z;
        const qq = dot >= 0 ? nn + dot : (cx * cx + cy * cy + cz * cz) / (nn - dot);
        const den = nn * qq;
        if (!(den > 0)) continue;
        const f = w * (n1 + n2) / den;
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
   * Longest step dt such that every listed pair of points that may reconnect (different loops, or at least
   * `minLinks` links apart on one loop) keeps |v_i − v_j|·dt ≤ δ_r + |x_i − x_j| (see `simulation.ts`);
   * Infinity if no pair moves. Positions and velocities of the step's start; `loop`, `index`, `length`: each
   * point's loop id, position in its loop and the loop's point count (compact state); minimum image in a
   * periodic box.
   */
  approachStep(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
    loop: Int32Array,
    index: Int32Array,
    length: Int32Array,
    minLinks: number,
    dr: number,
  ): number {
    const st = this.start, seg = this.seg, L = this.boxSize;
    let best = Infinity;
    for (let i = 0; i < n; i++) {
      for (let q = st[i]; q < st[i + 1]; q++) {
        const j = seg[q];
        if (loop[j] === loop[i]) {
          const d = Math.abs(index[i] - index[j]);
          if (Math.min(d, length[i] - d) < minLinks) continue;
        }
        const ux = vx[i] - vx[j], uy = vy[i] - vy[j], uz = vz[i] - vz[j];
        const w2 = ux * ux + uy * uy + uz * uz;
        // (δ_r + d)/w ≥ δ_r/w: only pairs whose own bound could be the smallest are measured.
        if (!(w2 * best * best > dr * dr)) continue;
        let ex = x[j] - x[i], ey = y[j] - y[i], ez = z[j] - z[i];
        if (L > 0) {
          ex -= L * Math.round(ex / L);
          ey -= L * Math.round(ey / L);
          ez -= L * Math.round(ez / L);
        }
        const t = (dr + Math.sqrt(ex * ex + ey * ey + ez * ez)) / Math.sqrt(w2);
        if (t < best) best = t;
      }
    }
    return best;
  }
}
