/**
 * Where the wall time of a multirate + FMM step goes, and what threads gain (private profiling tool, not part
 * of the suite): wraps the step's parts with timers on one ring tangle and prints ms/step of each, for every
 * thread count in the same process (alternating, best of `reps` per part), then the ratios to the first count.
 * The runs must end bit-identical; the script says so.
 *   deno run -A engines/filament/_step_profile.ts [points] [steps] [threads, e.g. 1,2] [reps]
 */
import { tangleSimulation } from "./tree_bench.ts";
import { FilamentSimulation, INTEGRATOR_DEFAULTS } from "./simulation.ts";
import { SegmentFmm } from "./fmm.ts";
import { SegmentTree } from "./tree.ts";
import { NearField } from "./near.ts";
import { Reconnector } from "./reconnect.ts";
import { FmmThreads } from "./fmm_threads.ts";
import { ThreadPool } from "./thread_pool.ts";

let totals = new Map<string, number>();
// deno-lint-ignore no-explicit-any
function wrap(proto: any, name: string, label: string): void {
  const f = proto[name];
  proto[name] = function (this: unknown, ...args: unknown[]) {
    const t0 = performance.now();
    try {
      return f.apply(this, args);
    } finally {
      totals.set(label, (totals.get(label) ?? 0) + performance.now() - t0);
    }
  };
}

const points = Number(Deno.args[0] ?? 20000);
const steps = Number(Deno.args[1] ?? 6);
const counts = (Deno.args[2] ?? "1,2").split(",").map(Number);
const reps = Number(Deno.args[3] ?? 3);

// deno-lint-ignore no-explicit-any
const S = FilamentSimulation.prototype as any;
wrap(S, "pushSlowLevel", "slow level (all)");
wrap(S, "fastRhs", "fast rhs (all)");
wrap(S, "topology", "topology (all)");
wrap(S, "approachStep", "approach step");
wrap(S, "wrapAndGuard", "wrap+guard");
wrap(SegmentTree.prototype, "build", "tree build");
wrap(FmmThreads.prototype, "velocity", "fmm total");
wrap(SegmentFmm.prototype, "prepare", "fmm prepare (P2M/M2M, radii)");
wrap(NearField.prototype, "build", "near build");
wrap(NearField.prototype, "add", "near add");
wrap(Reconnector.prototype, "run", "reconnect");
wrap(ThreadPool.prototype, "run", "threaded parts (ThreadPool.run)");

/** Best ms/step per part over the repetitions, per thread count. */
const best = counts.map(() => new Map<string, number>());
const finals: Float64Array[] = [];
console.log(`load average before: ${Deno.loadavg().map((v) => v.toFixed(2)).join(" ")}`);
for (let r = 0; r < reps; r++) {
  for (let c = 0; c < counts.length; c++) {
    const sim = tangleSimulation(points, "fmm", INTEGRATOR_DEFAULTS, counts[c]);
    for (let k = 0; k < 6; k++) sim.advance(1); // warm up (and start the workers)
    totals = new Map();
    const w0 = performance.now();
    for (let k = 0; k < steps; k++) sim.advance(1);
    totals.set("step (wall)", performance.now() - w0);
    for (const [k, v] of totals) best[c].set(k, Math.min(best[c].get(k) ?? Infinity, v / steps));
    if (r === 0) finals[c] = sim.state.x.slice(0, sim.state.n);
    console.log(
      `rep ${r + 1}, ${counts[c]} thread(s): n = ${sim.state.n}, ${
        (totals.get("step (wall)")! / steps).toFixed(1)
      } ms/step`,
    );
    sim.field.close();
  }
}
console.log(`load average after: ${Deno.loadavg().map((v) => v.toFixed(2)).join(" ")}`);
const same = finals.every((f) =>
  f.length === finals[0].length && f.every((v, i) => Object.is(v, finals[0][i]))
);
console.log(`final positions bit-identical across thread counts: ${same}`);
const wall = best[0].get("step (wall)")!, par = best[0].get("threaded parts (ThreadPool.run)") ?? 0;
for (const t of counts.slice(1)) {
  console.log(
    `Amdahl bound on ${t} threads from the ${counts[0]}-thread split (${
      (100 * par / wall).toFixed(1)
    } % in pool tasks): ` +
      `${(wall / (wall - par + par / t)).toFixed(2)}×`,
  );
}
const labels = [...best[0].keys()].sort((a, b) => best[0].get(b)! - best[0].get(a)!);
console.log(
  `${"part (best of " + reps + ", ms/step)".padEnd(34)}` +
    counts.map((t) => `${t} thr`.padStart(10)).join("") +
    counts.slice(1).map((t) => `ratio 1:${t}`.padStart(11)).join(""),
);
for (const k of labels) {
  const v = counts.map((_, c) => best[c].get(k) ?? NaN);
  console.log(
    k.padEnd(34) + v.map((x) => x.toFixed(1).padStart(10)).join("") +
      v.slice(1).map((x) => (v[0] / x).toFixed(2).padStart(11)).join(""),
  );
}
