/**
 * The initial GP state of a realisation: ground state of the trap, vortices imprinted on it, cores relaxed.
 *
 * Steps:
 *  1. Ground state at fixed norm with μ = 1 (relax.ts). It depends only on the grid, trap and relaxation
 *     settings, so each worker keeps the last two it computed and reuses them (the numbers are identical to a
 *     fresh solve: the computation is deterministic).
 *  2. Vortices: an explicit list, or a random cloud drawn by `sampleCloud` (engines/_cloud.ts, the same sampler
 *     and stream use as the point-vortex engine) inside the trap minus `wallClearance`, or anywhere in a periodic
 *     grid (minimum-image separations).
 *  3. Imprint (a vortex exactly on a grid node is moved by 1e-6 h, where its phase is defined)
 *     ψ = ψ_GS · Π_j f(|r − r_j|) · e^{iΦ}: f the Padé core profile (core.ts), |r − r_j| the minimum-image
 *     distance in a periodic grid, Φ the phase pattern with the trap's images (phase.ts).
 *  4. Relax in imaginary time for `coreTime` with Φ pinned, at the ground state's norm or at μ = 1.
 */
import { type CloudRegion, sampleCloud } from "../_cloud.ts";
import type { RandomStream } from "../random.ts";
import { coreAmplitude } from "./core.ts";
import type { Grid } from "./grid.ts";
import type { GpParams } from "./params.ts";
import { boxPhase, diskPhase, periodicPhase, type VortexList } from "./phase.ts";
import { type GroundState, groundState, type Relaxer, type RelaxResult } from "./relax.ts";
import { STUDY_TIME_PER_GP_TIME } from "./params.ts";

/** Imaginary time step of the core relaxation (ξ/c). */
export const CORE_DTAU = 0.05;

const cache = new Map<string, GroundState>();

/** The trap's ground state, reused within a worker for identical grid, trap and relaxation settings. */
export function cachedGroundState(relaxer: Relaxer, params: GpParams): GroundState {
  const key = JSON.stringify([
    params.grid,
    params.trap,
    params.relaxation.tolerance,
    params.relaxation.maxIterations,
  ]);
  let gs = cache.get(key);
  if (gs === undefined) {
    gs = groundState(relaxer, params.relaxation);
    cache.set(key, gs);
    while (cache.size > 2) cache.delete(cache.keys().next().value!);
  }
  return gs;
}

/** The vortices to imprint, with ids (explicit: list order; cloud: 0..N−1) and the cloud's nominal density. */
export function initialVortices(
  params: GpParams,
  gridSide: number,
  rng: RandomStream,
): VortexList & { readonly id: Int32Array; readonly density: number | null } {
  const init = params.initial;
  if (init.kind === "explicit") {
    const n = init.vortices.length;
    return {
      n,
      x: Float64Array.from(init.vortices, (v) => v.x),
      y: Float64Array.from(init.vortices, (v) => v.y),
      s: Float64Array.from(init.vortices, (v) => v.circulation),
      id: Int32Array.from({ length: n }, (_, k) => k),
      density: null,
    };
  }
  const trap = params.trap;
  const half = 0.5 * gridSide;
  let region: CloudRegion;
  if (trap.kind === "periodic") {
    // Draws outside the grid square are refused (the sampler uses minimum-image separations).
    region = {
      accepts: (x, y) => Math.abs(x) < half && Math.abs(y) < half,
      periodicSide: gridSide,
      describe: "",
    };
  } else if (trap.kind === "disk") {
    const limit = trap.radius - init.wallClearance;
    region = {
      accepts: (x, y) => Math.hypot(x, y) < limit,
      periodicSide: 0,
      describe: `, disk trap radius ${trap.radius} less wallClearance ${init.wallClearance}`,
    };
  } else {
    const limit = 0.5 * trap.side - init.wallClearance;
    region = {
      accepts: (x, y) => Math.abs(x) < limit && Math.abs(y) < limit,
      periodicSide: 0,
      describe: `, box trap half-side ${0.5 * trap.side} less wallClearance ${init.wallClearance}`,
    };
  }
  const c = sampleCloud(init, region, rng);
  return { n: c.n, x: c.x, y: c.y, s: c.g, id: c.id, density: c.density };
}

/**
 * The vortices, with any that sits within 1e-9 h of a grid node moved by 1e-6 h along the diagonal: at a node the
 * imprinted phase would be undefined, and the windings of the four plaquettes around it would be arbitrary.
 */
function offNodes(grid: Grid, v: VortexList): VortexList {
  const h = grid.h;
  const onNode = (c: number) => Math.abs(c / h - Math.round(c / h)) < 1e-9;
  let any = false;
  for (let k = 0; k < v.n; k++) if (onNode(v.x[k]) && onNode(v.y[k])) any = true;
  if (!any) return v;
  const x = v.x.slice(), y = v.y.slice();
  for (let k = 0; k < v.n; k++) {
    if (onNode(x[k]) && onNode(y[k])) {
      x[k] += 1e-6 * h;
      y[k] += 1e-6 * h;
    }
  }
  return { n: v.n, x, y, s: v.s };
}

/** Writes e^{iΦ} (cos, sin) of the trap's phase pattern for the vortices. */
export function phasePattern(
  grid: Grid,
  params: GpParams,
  v: VortexList,
  cos: Float64Array,
  sin: Float64Array,
): void {
  const trap = params.trap;
  if (trap.kind === "disk") diskPhase(grid, v, trap.radius, cos, sin);
  else if (trap.kind === "box") boxPhase(grid, v, trap.side, cos, sin);
  else periodicPhase(grid, v, grid.side, cos, sin);
}

/**
 * Imprints the vortices on the ground state and relaxes the cores with the phase pinned; writes ψ into `psi`
 * and returns the relaxation's result. `cos`/`sin` receive the phase pattern.
 */
export function imprintAndRelax(
  relaxer: Relaxer,
  params: GpParams,
  gs: GroundState,
  v: VortexList,
  buffers: { psi: Float64Array; cos: Float64Array; sin: Float64Array },
): RelaxResult {
  const grid = relaxer.grid, n = grid.n, { psi, cos, sin } = buffers;
  const periodic = params.trap.kind === "periodic";
  v = offNodes(grid, v);
  phasePattern(grid, params, v, cos, sin);
  const side = grid.side;
  for (let j = 0; j < n; j++) {
    const y = grid.coordinate(j);
    for (let i = 0; i < n; i++) {
      const x = grid.coordinate(i), p = j * n + i;
      let amp = gs.psi[2 * p];
      for (let k = 0; k < v.n; k++) {
        let dx = x - v.x[k], dy = y - v.y[k];
        if (periodic) {
          dx -= side * Math.round(dx / side);
          dy -= side * Math.round(dy / side);
        }
        amp *= coreAmplitude(Math.hypot(dx, dy));
      }
      psi[2 * p] = amp * cos[p];
      psi[2 * p + 1] = amp * sin[p];
    }
  }
  const r = params.relaxation;
  const iterations = Math.round(r.coreTime / STUDY_TIME_PER_GP_TIME / CORE_DTAU);
  return relaxer.relax(psi, {
    constraint: r.constraint === "norm"
      ? { kind: "norm", value: gs.norm }
      : { kind: "chemical-potential", value: 1 },
    dtau: CORE_DTAU,
    tolerance: 0,
    maxIterations: Math.max(0, iterations),
    pinned: { cos, sin },
  });
}
