/**
 * Split-step benchmarks (`deno bench engines/gross-pitaevskii/splitstep_bench.ts`): one Strang step of the
 * undamped and damped GP equation on 128², 256² and 512² grids. For a printed table with the numpy reference
 * and memory per realisation run `deno run --allow-all engines/gross-pitaevskii/_step_rate.ts`.
 */
import { Fft2d } from "./fft2d.ts";
import { Grid } from "./grid.ts";
import { SplitStep } from "./splitstep.ts";

let sink = 0; // results are used so the steps cannot be optimised away
for (const n of [128, 256, 512]) {
  const grid = new Grid(n, 0.5), fft = new Fft2d(n), v = new Float64Array(n * n);
  const psi = new Float64Array(2 * n * n);
  for (let p = 0; p < n * n; p++) psi[2 * p] = 1 + 0.01 * Math.sin(p);
  for (const gamma of [0, 0.01]) {
    const step = new SplitStep(grid, fft, v, { gamma, dt: 0.02 });
    Deno.bench({ name: `SplitStep ${n}² γ = ${gamma}`, group: `${n}²`, baseline: gamma === 0 }, () => {
      step.advance(psi, 1);
      sink += psi[0];
    });
  }
}
