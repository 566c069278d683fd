/**
 * Benchmarks of the filament engine's nonlocal sum and time stepping, side by side in one run (not part of the
 * test suite). Ring tangles of constant line density (rings of radius ~1, spacing 0.075, δ = 0.1).
 *
 *   deno run -A engines/filament/tree_bench.ts [sizes] [maxDirect] [perTimePoints] [perTimeDuration]
 *   (defaults "5000,10000,20000,50000,100000", 20000, 20000, 0.01)
 *
 * 1. One nonlocal evaluation per method and size: direct sum (and the same exact formula compiled natively
 *    with gcc -O3 -march=native -ffast-math when gcc exists — a reference, never a dependency), the Barnes–Hut
 *    tree as configured before (θ = 0.4, leaf 16), the FMM with its defaults (p = 5, θ = 0.5, leaf 64, f32x4
 *    near field) on 1 and 2 threads: CPU ms (best of 3), interactions per point (segment pairs + cells or
 *    cell–cell expansions), 99th-percentile |Δv|/v_rms against the exact sum at 256 sampled points, and
 *    ms/(N log₂N) to read the scaling.
 * 2. Simulated time per CPU time on one ring cloud: RK4 + tree (the previous scheme, with the present
 *    remeshing) against multirate + FMM (the new defaults), over the same physical time.
 * The machine may be shared: compare the ratios printed by one run, not absolute times across runs.
 */
import process from "node:process";
import { FilamentSimulation } from "./simulation.ts";
import { ringCloud } from "./initial.ts";
import { RandomStream } from "../random.ts";
import { simConfig } from "./_testing.ts";
import { computeGeometry } from "./geometry.ts";
import { nonlocalDirect, segmentVelocity } from "./biot_savart.ts";
import { SegmentTree, SHARED } from "./tree.ts";
import { FmmThreads } from "./fmm_threads.ts";
import { FMM_DEFAULTS } from "./velocity.ts";
import type { IntegratorConfig } from "./simulation.ts";

/** A simulation of a random ring tangle with about `points` points (rings of radius ~1, spacing 0.075). */
export function tangleSimulation(
  points: number,
  summation: "direct" | "tree" | "fmm",
  integrator: IntegratorConfig = { kind: "rk4" },
  threads = 1,
): FilamentSimulation {
  const rings = Math.max(1, Math.round(points / 84));
  const cloud = ringCloud(
    { count: rings, radius: { mean: 1, sd: 0.3 }, cloudRadius: 3 * Math.cbrt(rings / 48), centre: [0, 0, 0] },
    0.075,
    0.1,
    RandomStream.fromState([2024, 12, 1, 7]),
  );
  return new FilamentSimulation(
    simConfig(0.1, { maxPoints: 1e7, integrator }, { summation, leafSize: 16, theta: 0.4, threads }),
    cloud.loops,
    () => {},
  );
}

function cpuMs(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
}

/** Best CPU time of `reps` runs of f (ms). */
function best(reps: number, f: () => void): number {
  let b = Infinity;
  for (let r = 0; r < reps; r++) {
    const c0 = cpuMs();
    f();
    b = Math.min(b, cpuMs() - c0);
  }
  return b;
}

/** Best wall time of `reps` runs (ms), for thread speed-ups. */
function bestWall(reps: number, f: () => void): number {
  let b = Infinity;
  for (let r = 0; r < reps; r++) {
    const t0 = performance.now();
    f();
    b = Math.min(b, performance.now() - t0);
  }
  return b;
}

/** Exact nonlocal velocity (no κ/4π) at m sampled points. */
function sampledExact(
  n: number,
  s: FilamentSimulation["state"],
  g: FilamentSimulation["geo"],
  idx: Int32Array,
): Float64Array {
  const out = new Float64Array(3 * idx.length), o = new Float64Array(3);
  for (let k = 0; k < idx.length; k++) {
    const i = idx[k];
    for (let j = 0; j < n; j++) {
      if (j === i || j === s.prev[i]) continue;
      segmentVelocity(s.x[i], s.y[i], s.z[i], s.x[j], s.y[j], s.z[j], g.dx[j], g.dy[j], g.dz[j], o);
      out[3 * k] += o[0];
      out[3 * k + 1] += o[1];
      out[3 * k + 2] += o[2];
    }
  }
  return out;
}

/** p99 of |Δv|/v_rms at the sampled points (v_rms of the method's field over all points). */
function p99(v: Float64Array[], n: number, idx: Int32Array, exact: Float64Array): number {
  let ms = 0;
  for (let i = 0; i < n; i++) ms += v[0][i] ** 2 + v[1][i] ** 2 + v[2][i] ** 2;
  const rms = Math.sqrt(ms / n);
  const e = Array.from(
    idx,
    (i, k) =>
      Math.hypot(v[0][i] - exact[3 * k], v[1][i] - exact[3 * k + 1], v[2][i] - exact[3 * k + 2]) / rms,
  );
  e.sort((a, b) => a - b);
  return e[Math.min(e.length - 1, Math.floor(0.99 * e.length))];
}

const C_KERNEL = `
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>
/* The straight-segment formula of biot_savart.ts, direct sum over all pairs. */
int main(int argc, char **argv) {
  FILE *f = fopen(argv[1], "rb"); int n, pad; if (fread(&n, 4, 1, f) != 1 || fread(&pad, 4, 1, f) != 1) return 1;
  double *d = malloc(sizeof(double) * 6 * n); int *pv = malloc(sizeof(int) * n);
  if (fread(d, 8, 6 * n, f) != (size_t)(6 * n) || fread(pv, 4, n, f) != (size_t)n) return 1;
  double *x = d, *y = d + n, *z = d + 2 * n, *dx = d + 3 * n, *dy = d + 4 * n, *dz = d + 5 * n;
  double *u = calloc(3 * n, sizeof(double));
  struct timespec t0, t1; clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t0);
  for (int i = 0; i < n; i++) {
    double px = x[i], py = y[i], pz = z[i], ux = 0, uy = 0, uz = 0;
    for (int j = 0; j < n; j++) {
      double r1x = px - x[j], r1y = py - y[j], r1z = pz - z[j];
      double r2x = r1x - dx[j], r2y = r1y - dy[j], r2z = r1z - dz[j];
      double n1 = sqrt(r1x * r1x + r1y * r1y + r1z * r1z), n2 = sqrt(r2x * r2x + r2y * r2y + r2z * r2z);
      double nn = n1 * n2, cx = r1y * r2z - r1z * r2y, cy = r1z * r2x - r1x * r2z, cz = r1x * r2y - r1y * r2x;
      double dot = r1x * r2x + r1y * r2y + r1z * r2z;
      double q = dot >= 0 ? nn + dot : (cx * cx + cy * cy + cz * cz) / (nn - dot);
      double den = nn * q;
      double fct = (j == i || j == pv[i] || !(den > 0)) ? 0 : (n1 + n2) / den;
      ux += fct * cx; uy += fct * cy; uz += fct * cz;
    }
    u[3 * i] = ux; u[3 * i + 1] = uy; u[3 * i + 2] = uz;
  }
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t1);
  printf("%.3f %.17g\\n", (t1.tv_sec - t0.tv_sec) * 1e3 + (t1.tv_nsec - t0.tv_nsec) * 1e-6, u[0]);
  return 0;
}
`;

/** Compiles the C reference once (null when gcc is absent or fails). */
function nativeDirect():
  | ((n: number, s: FilamentSimulation["state"], g: FilamentSimulation["geo"]) => number)
  | null {
  const dir = Deno.makeTempDirSync({ prefix: "spindrift-bench-" });
  Deno.writeTextFileSync(`${dir}/direct.c`, C_KERNEL);
  try {
    const r = new Deno.Command("gcc", {
      args: ["-O3", "-march=native", "-ffast-math", "-o", `${dir}/direct`, `${dir}/direct.c`, "-lm"],
    }).outputSync();
    if (!r.success) return null;
  } catch {
    return null;
  }
  return (n, s, g) => {
    const buf = new ArrayBuffer(8 + 48 * n + 4 * n);
    new Int32Array(buf, 0, 1)[0] = n;
    const d = new Float64Array(buf, 8, 6 * n);
    for (let i = 0; i < n; i++) {
      d[i] = s.x[i];
      d[n + i] = s.y[i];
      d[2 * n + i] = s.z[i];
      d[3 * n + i] = g.dx[i];
      d[4 * n + i] = g.dy[i];
      d[5 * n + i] = g.dz[i];
    }
    new Int32Array(buf, 8 + 48 * n, n).set(s.prev.subarray(0, n));
    Deno.writeFileSync(`${dir}/in.bin`, new Uint8Array(buf));
    const out = new Deno.Command(`${dir}/direct`, { args: [`${dir}/in.bin`] }).outputSync();
    return Number(new TextDecoder().decode(out.stdout).split(" ")[0]);
  };
}

function evaluationTable(sizes: number[], maxDirect: number): void {
  const native = nativeDirect();
  console.log(
    `\n1. One nonlocal evaluation (CPU ms, best of 3; error = p99 |Δv|/v_rms at 256 sampled points)` +
      `${native ? "" : " — gcc not found: no native reference"}`,
  );
  console.log(
    "points | direct TS ms | native C ms | tree ms (inter./pt, p99) | FMM ms (inter./pt, p99) | " +
      "FMM 2 threads wall ratio | tree/FMM | FMM ms/(N log₂N)·1e3",
  );
  for (const target of sizes) {
    const sim = tangleSimulation(target, "tree");
    const s = sim.state, n = s.n, g = sim.geo;
    computeGeometry(n, s.x, s.y, s.z, s.next, s.prev, 0, g);
    const idx = Int32Array.from(
      { length: Math.min(256, n) },
      (_, k) => Math.floor((k + 0.5) * n / Math.min(256, n)),
    );
    const exact = sampledExact(n, s, g, idx);
    const vec = () => [new Float64Array(n), new Float64Array(n), new Float64Array(n)];
    let direct = "—", nat = "—";
    if (n <= maxDirect) {
      const v = vec();
      direct = best(1, () => nonlocalDirect(n, s.x, s.y, s.z, s.prev, g.dx, g.dy, g.dz, 1, v[0], v[1], v[2]))
        .toFixed(0);
      if (native) nat = native(n, s, g).toFixed(0);
    }
    const tree = new SegmentTree();
    const vt = vec();
    let ti = 0;
    const tt = best(3, () => {
      for (const a of vt) a.fill(0);
      tree.build(n, s.x, s.y, s.z, g.dx, g.dy, g.dz, g.len, 0, 16);
      ti = tree.velocity(n, s.x, s.y, s.z, s.prev, 1, 0.4, vt[0], vt[1], vt[2]);
    });
    const ftree = new SegmentTree();
    ftree.useAllocator(SHARED);
    const F = FMM_DEFAULTS;
    const one = new FmmThreads(1, F.order, F.nearKernel), two = new FmmThreads(2, F.order, F.nearKernel);
    const vf = vec();
    let fi = 0;
    const run = (p: FmmThreads) => () => {
      for (const a of vf) a.fill(0);
      ftree.build(n, s.x, s.y, s.z, g.dx, g.dy, g.dz, g.len, 0, F.leafSize);
      fi = p.velocity(ftree, n, s.x, s.y, s.z, s.prev, 1, F.theta, vf[0], vf[1], vf[2]);
    };
    const tf = best(3, run(one));
    const e1 = p99(vf, n, idx, exact);
    const w1 = bestWall(3, run(one)), w2 = bestWall(3, run(two));
    one.close();
    two.close();
    console.log(
      `${n} | ${direct} | ${nat} | ${tt.toFixed(0)} (${(ti / n).toFixed(0)}, ${
        p99(vt, n, idx, exact).toExponential(1)
      }) | ` +
        `${tf.toFixed(0)} (${(fi / n).toFixed(0)}, ${e1.toExponential(1)}) | ${(w1 / w2).toFixed(2)} | ` +
        `${(tt / tf).toFixed(2)} | ${(1e3 * tf / (n * Math.log2(n))).toFixed(3)}`,
    );
  }
}

function perTime(points: number, duration: number): void {
  console.log(`\n2. Simulated time ${duration} of one ring cloud (≈ ${points} points): CPU s, steps, ratio`);
  const runs: [string, "tree" | "fmm", IntegratorConfig][] = [
    ["RK4 + tree (θ 0.4, leaf 16)", "tree", { kind: "rk4" }],
    ["multirate + FMM (defaults)", "fmm", { kind: "multirate", order: 4, slowFactor: 1, window: 2 }],
  ];
  let ref = 0;
  for (const [name, summation, integ] of runs) {
    const sim = tangleSimulation(points, summation, integ);
    const c0 = cpuMs();
    while (sim.t < duration * (1 - 1e-12)) sim.advance(duration - sim.t);
    const c = (cpuMs() - c0) / 1000;
    if (ref === 0) ref = c;
    console.log(
      `${name}: n ${sim.state.n}, ${sim.steps} steps, ${c.toFixed(1)} s CPU, ${
        (1000 * c / sim.steps).toFixed(0)
      } ms/step, ` +
        `${sim.reconnections} reconnections; speed-up ${(ref / c).toFixed(2)}×`,
    );
    sim.field.close();
  }
}

if (import.meta.main) {
  const sizes = (Deno.args[0] ?? "5000,10000,20000,50000,100000").split(",").map(Number);
  const maxDirect = Number(Deno.args[1] ?? 20000);
  const points = Number(Deno.args[2] ?? 20000);
  const duration = Number(Deno.args[3] ?? 0.01);
  evaluationTable(sizes, maxDirect);
  if (points > 0) perTime(points, duration);
}
