/**
 * CPU time to simulate a fixed physical time of one ring tangle (not part of the test suite). The same file runs
 * in an earlier checkout too (it imports only modules every version has), so `tools/filament_speedup.ts` can
 * compare today's defaults with an earlier build on the same tangle, in one script.
 *
 *   deno run -A engines/filament/time_bench.ts [points] [duration] [tree|fmm]
 *   (defaults 20000, 0.05, fmm; tree = the Barnes–Hut sum at θ 0.4, leaves of 16, as configured before)
 *
 * The tangle is the one of `tree_bench.ts` (rings of radius ~1, spacing 0.075, δ = 0.1). Prints one JSON line:
 * initial and final point count, steps, simulated time, CPU seconds, reconnections.
 */
import process from "node:process";
import { FilamentSimulation } from "./simulation.ts";
import { ringCloud } from "./initial.ts";
import { RandomStream } from "../random.ts";
import { simConfig } from "./_testing.ts";

const points = Number(Deno.args[0] ?? 20000);
const duration = Number(Deno.args[1] ?? 0.05);
const summation = (Deno.args[2] ?? "fmm") as "tree" | "fmm";
const rings = Math.max(1, Math.round(points / 84));
const cloud = ringCloud(
  { count: rings, radius: { mean: 1, sd: 0.3 }, cloudRadius: 3 * Math.cbrt(rings / 48), centre: [0, 0, 0] },
  0.075,
  0.1,
  RandomStream.fromState([2024, 12, 1, 7]),
);
const velocity = summation === "tree" ? { summation, leafSize: 16, theta: 0.4 } : { summation };
const sim = new FilamentSimulation(simConfig(0.1, { maxPoints: 1e7 }, velocity), cloud.loops, () => {});
const cpu = () => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1e6;
};
const n0 = sim.state.n, c0 = cpu();
while (sim.t < duration * (1 - 1e-12)) sim.advance(duration - sim.t);
const seconds = cpu() - c0;
console.log(JSON.stringify({
  summation,
  points: n0,
  pointsEnd: sim.state.n,
  steps: sim.steps,
  t: sim.t,
  cpuSeconds: Number(seconds.toFixed(2)),
  reconnections: sim.reconnections,
}));
// deno-lint-ignore no-explicit-any
(sim as any).field?.close?.();
