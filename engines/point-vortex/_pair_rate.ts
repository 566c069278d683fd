/**
 * Prints pair interactions per second of the velocity kernels (`deno run engines/point-vortex/_pair_rate.ts`).
 * Pairs per call = N(N − 1)/2. Each kernel is warmed up, then timed in 15 batches of ≥ 100 ms; the best batch
 * (robust to other processes on a shared machine) and the median are printed. Periodic box: the engine's
 * WebAssembly kernel, the same Weierstrass-ζ form in TypeScript, and the image series it replaced.
 */
import { benchCloud } from "./_bench_setup.ts";
import { velocityPeriodic, velocityPeriodicImageSeries } from "./periodic.ts";
import { velocityDisk, velocityUnbounded } from "./velocity.ts";
import { PeriodicKernel } from "./wasm_periodic.ts";

const wasm = PeriodicKernel.load();
type Kernel = (c: ReturnType<typeof benchCloud>) => number;
const kernels: [string, Kernel, number[]][] = [
  ["unbounded", (c) => velocityUnbounded(c.n, c.x, c.y, c.g, c.u, c.v), [1000, 4000]],
  ["disk", (c) => velocityDisk(c.n, c.x, c.y, c.g, Math.sqrt(c.n), c.u, c.v), [1000, 4000]],
  [
    "periodic-wasm (engine)",
    (c) => wasm.velocity(c.n, c.x, c.y, c.g, 1.2 * Math.sqrt(c.n), c.u, c.v),
    [1000, 4000],
  ],
  ["periodic", (c) => velocityPeriodic(c.n, c.x, c.y, c.g, 1.2 * Math.sqrt(c.n), c.u, c.v), [1000, 4000]],
  [
    "periodic-image-series",
    (c) => velocityPeriodicImageSeries(c.n, c.x, c.y, c.g, 1.2 * Math.sqrt(c.n), c.u, c.v),
    [1000],
  ],
];
let sink = 0;
console.log("kernel                    N   best pairs/s  median pairs/s  best ms/call");
for (const [name, kernel, sizes] of kernels) {
  for (const n of sizes) {
    const c = benchCloud(n);
    for (let k = 0; k < 3; k++) sink += kernel(c);
    const perCall: number[] = [];
    for (let batch = 0; batch < 15; batch++) {
      let calls = 0;
      const t0 = performance.now();
      let t1 = t0;
      while (t1 - t0 < 100) {
        sink += kernel(c) + c.u[0];
        calls++;
        t1 = performance.now();
      }
      perCall.push((t1 - t0) / calls);
    }
    perCall.sort((a, b) => a - b);
    const pairs = n * (n - 1) / 2;
    const rate = (ms: number) => (pairs / (ms / 1000)).toExponential(2);
    console.log(
      `${name.padEnd(23)} ${String(n).padStart(5)}   ${rate(perCall[0]).padStart(12)}  ${
        rate(perCall[7]).padStart(14)
      }` +
        `  ${perCall[0].toFixed(3).padStart(12)}`,
    );
  }
}
if (Number.isNaN(sink)) console.log(sink);
