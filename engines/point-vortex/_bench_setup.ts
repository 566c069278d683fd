/** Shared set-up for the velocity benchmarks (private): a random ± cloud with preallocated output arrays. */
import { RandomStream } from "../random.ts";

export interface BenchCloud {
  readonly n: number;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly g: Float64Array;
  readonly u: Float64Array;
  readonly v: Float64Array;
}

/** N vortices uniform in a disk of radius √N/2 (density ≈ 1.3), random signs; outputs preallocated. */
export function benchCloud(n: number, seed = 1): BenchCloud {
  const rng = RandomStream.fromState([seed, 2, 3, 4]);
  const R = Math.sqrt(n) / 2;
  const x = new Float64Array(n), y = new Float64Array(n), g = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const r = R * Math.sqrt(rng.uniform()), th = 2 * Math.PI * rng.uniform();
    x[i] = r * Math.cos(th);
    y[i] = r * Math.sin(th);
    g[i] = rng.uniform() < 0.5 ? 1 : -1;
  }
  return { n, x, y, g, u: new Float64Array(n), v: new Float64Array(n) };
}
