/**
 * Shared fixtures of the filament tests (private): simulation configurations and simple measurements.
 */
import { FilamentSimulation, type SimulationConfig } from "./simulation.ts";
import type { Loop } from "./initial.ts";
import type { VelocityConfig } from "./velocity.ts";

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
