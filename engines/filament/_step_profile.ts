/**
 * Where the CPU time of a multirate + FMM step goes (private profiling tool, not part of the suite): wraps the
 * step's parts with timers on one ring tangle and prints the share of each.
 *   deno run -A engines/filament/_step_profile.ts [points] [steps] [threads]
 */
import process from "node:process";
import { tangleSimulation } from "./tree_bench.ts";
import { INTEGRATOR_DEFAULTS } from "./simulation.ts";
import { SegmentFmm } from "./fmm.ts";
import { SegmentTree } from "./tree.ts";
import { NearField } from "./near.ts";
import { Reconnector } from "./reconnect.ts";
import { FmmThreads } from "./fmm_threads.ts";

const totals = new Map<string, number>();
const counts = new Map<string, number>();
let depth = 0;
function cpu(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
}
// deno-lint-ignore no-explicit-any
function wrap(proto: any, name: string, label: string): void {
  const f = proto[name];
  proto[name] = function (this: unknown, ...args: unknown[]) {
    const t0 = performance.now();
    depth++;
    try {
      return f.apply(this, args);
    } finally {
      depth--;
      totals.set(label, (totals.get(label) ?? 0) + performance.now() - t0);
      counts.set(label, (counts.get(label) ?? 0) + 1);
    }
  };
}

const points = Number(Deno.args[0] ?? 20000);
const steps = Number(Deno.args[1] ?? 20);
const threads = Number(Deno.args[2] ?? 1);
const sim = tangleSimulation(points, "fmm", INTEGRATOR_DEFAULTS);
// deno-lint-ignore no-explicit-any
(sim.field.config as any).threads = threads;
// warm up
for (let k = 0; k < 6; k++) sim.advance(1);
// deno-lint-ignore no-explicit-any
const S = Object.getPrototypeOf(sim) as any;
wrap(S, "pushSlowLevel", "slow level (all)");
wrap(S, "fastRhs", "fast rhs (all)");
wrap(S, "topology", "topology (all)");
wrap(S, "approachSpeed", "approach speed");
wrap(S, "wrapAndGuard", "wrap+guard");
wrap(SegmentTree.prototype, "build", "tree build");
wrap(FmmThreads.prototype, "velocity", "fmm total");
wrap(SegmentFmm.prototype, "prepare", "fmm prepare (P2M/M2M, radii)");
wrap(SegmentFmm.prototype, "downward", "fmm L2L+L2P");
wrap(SegmentFmm.prototype, "runUnit", "fmm units (traversal+M2L+P2P+down)");
wrap(NearField.prototype, "build", "near build");
wrap(NearField.prototype, "add", "near add");
wrap(Reconnector.prototype, "run", "reconnect");
const c0 = cpu(), w0 = performance.now();
for (let k = 0; k < steps; k++) sim.advance(1);
const c = cpu() - c0, w = performance.now() - w0;
console.log(
  `n = ${sim.state.n}, ${steps} steps, substeps last ${sim.lastSubsteps}, CPU ${c.toFixed(0)} ms, wall ${
    w.toFixed(0)
  } ms (${(w / steps).toFixed(0)} ms/step)`,
);
for (const [k, v] of [...totals].sort((a, b) => b[1] - a[1])) {
  console.log(
    `${k.padEnd(40)} ${(v / steps).toFixed(1).padStart(8)} ms/step ${
      (100 * v / w).toFixed(1).padStart(5)
    } %  calls/step ${(counts.get(k)! / steps).toFixed(1)}`,
  );
}
sim.field.close();
