/**
 * Remeshing: keeps the spacing of filament points within [δ_min, δ_max] between full time steps.
 *
 * Method.
 * 1. Removal: a segment shorter than δ_min loses one end point — the one with the smaller curvature, never a
 *    marker — unconditionally, so every segment ends the pass at least δ_min long (for δ_min ≤ δ_max/2): a
 *    merged segment longer than δ_max is split again by step 2 into pieces of at least δ_max/2. This floor is
 *    what the time step rests on (dt ∝ h_min², `simulation.ts`); an earlier rule kept short segments in
 *    sharply curved places and let h_min fall to ≈ δ/4, which cost a factor ≈ 4 in the step. Sharp features
 *    below δ_min are not resolved either way. If both ends are markers, the marker of the lower-curvature end
 *    moves to its other neighbour (when that one is not a marker) and the end is deleted; the transfer is
 *    reported.
 * 2. Insertion: a segment longer than δ_max is split into k = ⌈ℓ/δ_max⌉ pieces by points on the osculating
 *    circle through its ends (curvature vector: mean of the two end points', projected normal to the chord;
 *    for one new point this is s_new = ½(s_i + s_{i+1}) + (√(R² − ℓ²/4) − R) n̂), or on the chord where the
 *    curvature is negligible. Local curvature is preserved.
 * Loops never drop below three points here (smaller loops are removed by the tiny-loop rule at compaction).
 * The state is left linked (not compact); call `compactInto` afterwards.
 *
 * References: K.W. Schwarz, Phys. Rev. B 38, 2398 (1988), doi:10.1103/PhysRevB.38.2398 (spacing control);
 * remeshing details are common practice, no source.
 *
 * @example
 * ```ts
 * import { remesh } from "./remesh.ts";
 * // computeGeometry(...state, geo); remesh(state, geo, { minSpacing: 0.5, maxSpacing: 1, boxSize: 0 }, ids, onTransfer);
 * ```
 */
import type { Geometry } from "./geometry.ts";
import { type FilamentState, HIST_STRIDE, type IdCounters } from "./state.ts";

export interface RemeshOptions {
  /** δ_min (length). */
  readonly minSpacing: number;
  /** δ_max (length). */
  readonly maxSpacing: number;
  /** Periodic cube side, 0 for unbounded. */
  readonly boxSize: number;
}

/** A marker moved from a deleted point to a neighbour. */
export interface MarkerTransfer {
  readonly markerId: number;
  /** Id the receiving point had before it became the marker. */
  readonly receiverOldId: number;
  /** Distance the marker jumped (length). */
  readonly jump: number;
}

export interface RemeshResult {
  inserted: number;
  removed: number;
}

// Per-call scratch (grown by doubling; reused).
let loopIndex = new Int32Array(0);
let loopCount = new Int32Array(0);

function dist(s: FilamentState, a: number, b: number, L: number): number {
  let dx = s.x[b] - s.x[a], dy = s.y[b] - s.y[a], dz = s.z[b] - s.z[a];
  if (L > 0) {
    dx -= L * Math.round(dx / L);
    dy -= L * Math.round(dy / L);
    dz -= L * Math.round(dz / L);
  }
  return Math.sqrt(dx * dx + dy * dy + dz * dz);
}

function curvature(geo: Geometry, i: number): number {
  return Math.sqrt(geo.cx[i] * geo.cx[i] + geo.cy[i] * geo.cy[i] + geo.cz[i] * geo.cz[i]);
}

function unlink(s: FilamentState, v: number): void {
  const p = s.prev[v], q = s.next[v];
  s.next[p] = q;
  s.prev[q] = p;
  s.alive[v] = 0;
}

/**
 * Remeshes a compact state in place (see module doc). `geo` must hold the geometry of the current positions.
 * Returns the numbers of inserted and removed points (a reused object: read it before the next call); marker
 * transfers are passed to `onTransfer`.
 */
export function remesh(
  state: FilamentState,
  geo: Geometry,
  opts: RemeshOptions,
  ids: IdCounters,
  onTransfer: (t: MarkerTransfer) => void,
): RemeshResult {
  const L = opts.boxSize;
  const dmin = opts.minSpacing, dmax = opts.maxSpacing;
  const n0 = state.n;
  if (loopIndex.length < n0) loopIndex = new Int32Array(Math.max(n0, 2 * loopIndex.length));
  if (loopCount.length < state.nLoops) {
    loopCount = new Int32Array(Math.max(state.nLoops, 2 * loopCount.length));
  }
  for (let k = 0; k < state.nLoops; k++) {
    const s0 = state.loopStart[k];
    for (let s = s0; s < s0 + state.loopLen[k]; s++) loopIndex[s] = k;
    loopCount[k] = state.loopLen[k];
  }
  const res: RemeshResult = { inserted: 0, removed: 0 };

  // 1. Removal.
  for (let i = 0; i < n0; i++) {
    while (state.alive[i]) {
      const k = loopIndex[i];
      if (loopCount[k] <= 3) break;
      const j = state.next[i];
      const l = dist(state, i, j, L);
      if (l >= dmin) break;
      const ci = curvature(geo, i), cj = curvature(geo, j);
      const first = ci <= cj ? i : j;
      const second = first === i ? j : i;
      let victim = -1;
      for (let q = 0; q < 2; q++) {
        const v = q === 0 ? first : second;
        if (state.marker[v]) continue;
        victim = v;
        break;
      }
      if (victim < 0) {
        // Both ends are markers: move the marker of `first` to its other neighbour if that is not a marker.
        const v = first;
        const w = v === i ? state.prev[v] : state.next[v];
        if (!state.marker[w] && w !== i && w !== j) {
          onTransfer({ markerId: state.id[v], receiverOldId: state.id[w], jump: dist(state, v, w, L) });
          state.marker[w] = 1;
          state.id[w] = state.id[v];
          state.marker[v] = 0;
          victim = v;
        }
      }
      if (victim < 0) break;
      unlink(state, victim);
      loopCount[k]--;
      res.removed++;
      if (victim === i) break;
    }
  }

  // 2. Insertion (segments of surviving original points; new points are appended after n0).
  for (let i = 0; i < n0; i++) {
    if (!state.alive[i]) continue;
    const j = state.next[i];
    let ex = state.x[j] - state.x[i], ey = state.y[j] - state.y[i], ez = state.z[j] - state.z[i];
    if (L > 0) {
      ex -= L * Math.round(ex / L);
      ey -= L * Math.round(ey / L);
      ez -= L * Math.round(ez / L);
    }
    const l = Math.sqrt(ex * ex + ey * ey + ez * ez);
    if (l <= dmax) continue;
    const pieces = Math.ceil(l / dmax);
    const ux = ex / l, uy = ey / l, uz = ez / l;
    let nx = 0.5 * (geo.cx[i] + geo.cx[j]),
      ny = 0.5 * (geo.cy[i] + geo.cy[j]),
      nz = 0.5 * (geo.cz[i] + geo.cz[j]);
    const dot = nx * ux + ny * uy + nz * uz;
    nx -= dot * ux;
    ny -= dot * uy;
    nz -= dot * uz;
    const kc = Math.sqrt(nx * nx + ny * ny + nz * nz);
    const curved = kc * l > 1e-6;
    let R = 0, h = 0, phi = 0;
    if (curved) {
      nx /= kc;
      ny /= kc;
      nz /= kc;
      R = Math.max(1 / kc, 0.5 * l);
      h = Math.sqrt(Math.max(0, R * R - 0.25 * l * l));
      phi = Math.asin(Math.min(1, 0.5 * l / R));
    }
    // Unwrapped position of i (for image counters of new points).
    const uix = state.x[i] + L * state.imx[i],
      uiy = state.y[i] + L * state.imy[i],
      uiz = state.z[i] + L * state.imz[i];
    let last = i;
    for (let q = 1; q < pieces; q++) {
      const tau = q / pieces;
      let rx: number, ry: number, rz: number; // offset from s_i
      if (curved) {
        const psi = -phi + 2 * phi * tau;
        const a = -R * Math.cos(psi) + h, b = R * Math.sin(psi) + 0.5 * l;
        rx = a * nx + b * ux;
        ry = a * ny + b * uy;
        rz = a * nz + b * uz;
      } else {
        rx = tau * ex;
        ry = tau * ey;
        rz = tau * ez;
      }
      const s = state.appendSlot();
      let px = state.x[i] + rx, py = state.y[i] + ry, pz = state.z[i] + rz;
      if (L > 0) {
        px -= L * Math.floor(px / L + 0.5);
        py -= L * Math.floor(py / L + 0.5);
        pz -= L * Math.floor(pz / L + 0.5);
        state.imx[s] = Math.round((uix + rx - px) / L);
        state.imy[s] = Math.round((uiy + ry - py) / L);
        state.imz[s] = Math.round((uiz + rz - pz) / L);
      }
      state.x[s] = px;
      state.y[s] = py;
      state.z[s] = pz;
      state.id[s] = ids.point();
      state.loopOf[s] = state.loopOf[i];
      // Integrator memory: interpolated along the segment (the slow velocity is smooth along the line).
      const hc = Math.min(state.histCount[i], state.histCount[j]);
      state.histCount[s] = hc;
      if (hc > 0) {
        const h = state.hist, bs = s * HIST_STRIDE, bi = i * HIST_STRIDE, bj = j * HIST_STRIDE;
        for (let k = 0; k < HIST_STRIDE; k++) h[bs + k] = (1 - tau) * h[bi + k] + tau * h[bj + k];
      }
      state.next[last] = s;
      state.prev[s] = last;
      last = s;
      res.inserted++;
    }
    state.next[last] = j;
    state.prev[j] = last;
  }
  return res;
}
