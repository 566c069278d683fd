/**
 * Benchmark of the nonlocal Biot–Savart sum: one full RK4 step (4 velocity evaluations + remeshing and
 * reconnection) versus the number of points, direct sum against the Barnes–Hut tree (θ = 0.4, leaf 16), on
 * random ring tangles of constant line density. Not part of the test suite.
 *
 * Run the table: `deno run -A engines/filament/tree_bench.ts [maxPoints] [maxDirectPoints]`
 * (defaults 50000 and 16000). `deno bench -A engines/filament/tree_bench.ts` runs small fixed-size cases.
 *
 * Output per size: wall and CPU time per step, interactions (point–segment and point–cell) per evaluation,
 * interactions per second, speed-up of the tree; at the end the peak resident memory.
 */
import process from "node:process";
import { FilamentSimulation } from "./simulation.ts";
import { ringCloud } from "./initial.ts";
import { RandomStream } from "../random.ts";
import { simConfig } from "./_testing.ts";

/** A simulation of a random ring tangle with about `points` points (rings of radius ~1, spacing 0.075). */
export function tangleSimulation(points: number, summation: "direct" | "tree"): FilamentSimulation {
  const rings = Math.max(1, Math.round(points / 84));
  const cloud = ringCloud(
    { count: rings, radius: { mean: 1, sd: 0.3 }, cloudRadius: 3 * Math.cbrt(rings / 48), centre: [0, 0, 0] },
    0.075,
    0.1,
    RandomStream.fromState([2024, 12, 1, 7]),
  );
  return new FilamentSimulation(
    simConfig(0.1, { maxPoints: 1e7 }, { summation, leafSize: 16, theta: 0.4 }),
    cloud.loops,
    () => {},
  );
}

function cpuMs(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
}

/** Times one step (after one warm-up step); returns wall ms, CPU ms and interactions per evaluation. */
export function timeStep(sim: FilamentSimulation): { wall: number; cpu: number; interactions: number } {
  const dt = 0.25 * sim.stableStep();
  sim.advance(dt, true);
  const w0 = performance.now(), c0 = cpuMs();
  sim.advance(dt, true);
  return { wall: performance.now() - w0, cpu: cpuMs() - c0, interactions: sim.field.interactions };
}

if (import.meta.main) {
  const maxPoints = Number(Deno.args[0] ?? 50000);
  const maxDirect = Number(Deno.args[1] ?? 16000);
  console.log(
    "points | direct step (wall / cpu ms) | tree step (wall / cpu ms) | tree interactions/eval | " +
      "tree interactions/s | direct pairs/s | speed-up (cpu)",
  );
  let peak = 0;
  for (const target of [1000, 2000, 4000, 8000, 16000, 32000, 50000]) {
    if (target > maxPoints) break;
    const tree = tangleSimulation(target, "tree");
    const n = tree.state.n;
    const t = timeStep(tree);
    let direct = "—", pairs = "—", speed = "—";
    if (target <= maxDirect) {
      const d = timeStep(tangleSimulation(target, "direct"));
      direct = `${d.wall.toFixed(0)} / ${d.cpu.toFixed(0)}`;
      pairs = (4 * d.interactions / (d.cpu / 1000)).toExponential(2);
      speed = (d.cpu / t.cpu).toFixed(2);
    }
    peak = Math.max(peak, process.memoryUsage().rss);
    console.log(
      `${n} | ${direct} | ${t.wall.toFixed(0)} / ${t.cpu.toFixed(0)} | ${t.interactions} | ` +
        `${(4 * t.interactions / (t.cpu / 1000)).toExponential(2)} | ${pairs} | ${speed}`,
    );
  }
  console.log(`peak resident memory: ${(peak / 2 ** 20).toFixed(0)} MiB`);
}

if (!import.meta.main) {
  for (const points of [2000, 8000]) {
    for (const summation of ["direct", "tree"] as const) {
      const sim = tangleSimulation(points, summation);
      const dt = 0.25 * sim.stableStep();
      Deno.bench({
        name: `filament step, ${summation}, ~${points} points`,
        group: `step-${points}`,
        n: 3,
        warmup: 1,
      }, () => {
        sim.advance(dt, true);
      });
    }
  }
}
