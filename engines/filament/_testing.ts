/**
 * Shared fixtures of the filament tests (private): simulation configurations and simple measurements.
 */
import { FilamentSimulation, INTEGRATOR_DEFAULTS, type SimulationConfig } from "./simulation.ts";
import { type Loop, ringCloud } from "./initial.ts";
import { computeGeometry, Geometry } from "./geometry.ts";
import { FilamentState, IdCounters } from "./state.ts";
import { RandomStream } from "../random.ts";
import { FMM_DEFAULTS, type VelocityConfig } from "./velocity.ts";

/** γ_E. */
export const GAMMA_E = 0.5772156649015329;
/** Ring constant of straight-segment sums, β = 3/4 − γ_E (docs/check-values.md §3.2 [DERIVED]). */
export const BETA_POLYGON = 0.75 - GAMMA_E;

/** Thin-ring speed (κ/4πR)[ln(8R/a₀) − C] (docs/check-values.md §3.2). */
export function ringSpeed(kappa: number, R: number, a0: number, C: number): number {
  return kappa / (4 * Math.PI * R) * (Math.log(8 * R / a0) - C);
}

/** A velocity configuration with test defaults (κ = 1, direct sum, no friction, unbounded). */
export function velocityConfig(over: Partial<VelocityConfig> = {}): VelocityConfig {
  return {
    kappa: 1,
    coreRadius: 1e-4,
    model: "biot-savart",
    summation: "direct",
    treeThreshold: 1e9,
    theta: 0.4,
    leafSize: 16,
    fmm: FMM_DEFAULTS,
    boxSize: 0,
    alpha: 0,
    alphaPrime: 0,
    normal: { kind: "rest" },
    ...over,
  };
}

/** A simulation configuration with spacing band [δ/2, δ] and test defaults. */
export function simConfig(
  delta: number,
  over: Partial<SimulationConfig> = {},
  vel: Partial<VelocityConfig> = {},
) {
  const c: SimulationConfig = {
    velocity: velocityConfig(vel),
    resolution: delta,
    minSpacing: delta / 2,
    reconnectionDistance: delta / 2,
    dtFactor: 3,
    remesh: true,
    reconnect: true,
    markerEvery: 6,
    heaterRadius: 0,
    removeBeyond: Infinity,
    maxDistance: 1e9,
    maxPoints: 1e6,
    minStep: 0,
    integrator: INTEGRATOR_DEFAULTS,
    ...over,
  };
  return c;
}

/** A simulation of the given loops that records its events. */
export function makeSim(config: SimulationConfig, loops: Loop[]) {
  const events: {
    t: number;
    kind: string;
    ids: readonly number[];
    data: Readonly<Record<string, number>>;
  }[] = [];
  const sim = new FilamentSimulation(config, loops, (e) => events.push(e));
  return { sim, events };
}

/** Length-weighted centroid and mean radius about it of loop k (unwrapped coordinates). */
export function loopCentroid(
  sim: FilamentSimulation,
  k: number,
): { c: [number, number, number]; radius: number } {
  const s = sim.state;
  const L = sim.config.velocity.boxSize;
  const s0 = s.loopStart[k], m = s.loopLen[k];
  let w = 0, cx = 0, cy = 0, cz = 0;
  const px = (i: number) => s.x[i] + L * s.imx[i], py = (i: number) => s.y[i] + L * s.imy[i];
  const pz = (i: number) => s.z[i] + L * s.imz[i];
  for (let q = 0; q < m; q++) {
    const i = s0 + q, j = s0 + ((q + 1) % m);
    const l = Math.hypot(px(j) - px(i), py(j) - py(i), pz(j) - pz(i));
    w += l;
    cx += l * 0.5 * (px(i) + px(j));
    cy += l * 0.5 * (py(i) + py(j));
    cz += l * 0.5 * (pz(i) + pz(j));
  }
  return { c: [cx / w, cy / w, cz / w], radius: w / (2 * Math.PI) };
}

/** Advances until time T (steps clamped to land on T). */
export function runTo(sim: FilamentSimulation, T: number): void {
  while (sim.t < T * (1 - 1e-13)) sim.advance(T - sim.t);
}

/** A frozen random tangle: a ring cloud with overlapping rings (about 4000 points). */
export function tangle(rings: number, L = 0): { s: FilamentState; g: Geometry } {
  const rng = RandomStream.fromState([11, 22, 33, 44]);
  const cloud = ringCloud(
    { count: rings, radius: { mean: 1, sd: 0.3 }, cloudRadius: 3, centre: [0, 0, 0] },
    0.1,
    0.1,
    rng,
  );
  const s = new FilamentState();
  const ids = new IdCounters();
  for (const l of cloud.loops) {
    if (L > 0) { for (const p of l) for (let c = 0; c < 3; c++) p[c] -= L * Math.floor(p[c] / L + 0.5); }
    s.appendLoop(l, ids, 6);
  }
  const g = new Geometry();
  computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, L, g);
  return { s, g };
}

/** Median, 99th percentile and max of |v_tree − v_direct| / v_rms(direct). */
export function errorStats(n: number, dx: Float64Array[], tx: Float64Array[]) {
  let rms = 0;
  for (let i = 0; i < n; i++) rms += dx[0][i] ** 2 + dx[1][i] ** 2 + dx[2][i] ** 2;
  rms = Math.sqrt(rms / n);
  const e = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    e[i] = Math.hypot(tx[0][i] - dx[0][i], tx[1][i] - dx[1][i], tx[2][i] - dx[2][i]) / rms;
  }
  e.sort();
  return { median: e[n >> 1], p99: e[Math.floor(0.99 * n)], max: e[n - 1] };
}

export const vec = (n: number): [Float64Array, Float64Array, Float64Array] => [
  new Float64Array(n),
  new Float64Array(n),
  new Float64Array(n),
];
