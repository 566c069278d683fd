/**
 * Velocity-kernel benchmarks (`deno bench engines/point-vortex/velocity_bench.ts`). Pair interactions per
 * call: N(N − 1)/2. For a printed pairs/s table run `deno run engines/point-vortex/_pair_rate.ts`.
 */
import { benchCloud } from "./_bench_setup.ts";
import { velocityPeriodic } from "./periodic.ts";
import { velocityDisk, velocityUnbounded } from "./velocity.ts";

let sink = 0; // results are accumulated so the calls cannot be optimised away
for (const n of [250, 1000, 4000]) {
  const c = benchCloud(n);
  Deno.bench({ name: `velocityUnbounded N = ${n}`, group: `N = ${n}`, baseline: true }, () => {
    sink += velocityUnbounded(c.n, c.x, c.y, c.g, c.u, c.v) + c.u[0];
  });
  Deno.bench({ name: `velocityDisk N = ${n}`, group: `N = ${n}` }, () => {
    sink += velocityDisk(c.n, c.x, c.y, c.g, Math.sqrt(n), c.u, c.v) + c.u[0];
  });
  if (n <= 1000) {
    Deno.bench({ name: `velocityPeriodic N = ${n}`, group: `N = ${n}` }, () => {
      sink += velocityPeriodic(c.n, c.x, c.y, c.g, 1.2 * Math.sqrt(n), c.u, c.v) + c.u[0];
    });
  }
}
