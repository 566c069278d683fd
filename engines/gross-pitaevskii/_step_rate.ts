/**
 * Prints the GP engine's time per split-step at 128², 256² and 512² (undamped and damped), the same step written
 * with numpy's FFT (`_step_numpy.py`, if python3 with numpy is present: benchmark only), their ratio, and the
 * memory a realisation holds (growth of heap plus array buffers while one runs, against the arrays it
 * allocates), and the FFT alone (one forward/inverse pair, fft.js against numpy.fft).
 *
 *   deno run --allow-all engines/gross-pitaevskii/_step_rate.ts
 *
 * Timing: 7 batches after a warm-up; best and median per step (the best is robust to other processes on a
 * shared machine).
 */
import { Fft2d } from "./fft2d.ts";
import { Grid } from "./grid.ts";
import { gpParamsSchema } from "./params.ts";
import { simulate } from "./simulate.ts";
import { SplitStep } from "./splitstep.ts";
import { RandomStream } from "../random.ts";

const SIZES = [128, 256, 512];

function ours(n: number, gamma: number): [number, number] {
  const grid = new Grid(n, 0.5), fft = new Fft2d(n), v = new Float64Array(n * n);
  const step = new SplitStep(grid, fft, v, { gamma, dt: 0.02 });
  const psi = new Float64Array(2 * n * n);
  for (let p = 0; p < n * n; p++) psi[2 * p] = 1 + 0.01 * Math.sin(p);
  step.advance(psi, 3);
  const reps = n <= 256 ? 40 : 10;
  const per: number[] = [];
  for (let b = 0; b < 7; b++) {
    const t0 = performance.now();
    step.advance(psi, reps);
    per.push((performance.now() - t0) / reps);
  }
  per.sort((a, b) => a - b);
  return [per[0], per[3]];
}

async function numpy(): Promise<Map<string, [number, number]>> {
  const out = new Map<string, [number, number]>();
  try {
    const script = new URL("./_step_numpy.py", import.meta.url).pathname;
    const r = await new Deno.Command("python3", { args: [script, SIZES.join(",")], stderr: "piped" })
      .output();
    if (!r.success) return out;
    for (const line of new TextDecoder().decode(r.stdout).trim().split("\n")) {
      const [n, g, best, median] = line.split(" ");
      out.set(`${n}/${g === "fft" ? "fft" : Number(g)}`, [Number(best), Number(median)]);
    }
  } catch {
    // no python3: the table shows dashes
  }
  return out;
}

function fftPair(n: number): number {
  const fft = new Fft2d(n), a = new Float64Array(2 * n * n);
  for (let p = 0; p < a.length; p++) a[p] = Math.sin(p);
  fft.forward(a);
  fft.inverse(a);
  const reps = n <= 256 ? 40 : 10;
  let best = Infinity;
  for (let b = 0; b < 7; b++) {
    const t0 = performance.now();
    for (let r = 0; r < reps; r++) {
      fft.forward(a);
      fft.inverse(a);
    }
    best = Math.min(best, (performance.now() - t0) / reps);
  }
  return best;
}

if (Deno.args[0] === "--memory") {
  memoryOfOneRealisation(Number(Deno.args[1]));
  Deno.exit(0);
}

/** Runs one short realisation on an n² grid and prints the growth of the peak resident set. */
function memoryOfOneRealisation(n: number): void {
  const params = gpParamsSchema.parse({
    grid: { points: n, spacing: 0.5 },
    trap: { kind: "periodic" },
    initial: { kind: "random-cloud", count: 8, radius: n / 8, minSeparation: 4 },
    timeStep: 0.3,
  });
  const before = Deno.memoryUsage().rss;
  simulate({
    params,
    controls: { duration: 6, sampleInterval: 3, tolerance: 1e-6, maxDistance: 1e9 },
    rng: RandomStream.fromState([1, 2, 3, 4]),
    realisationIndex: 0,
  }, { frame() {}, event() {}, snapshot() {} });
  const status = Deno.readTextFileSync("/proc/self/status");
  const peak = 1024 * Number(/VmHWM:\s+(\d+)/.exec(status)?.[1] ?? NaN);
  // Arrays held: ψ, Fourier work copies (relaxation, diagnostics ×3), kinetic factor, ground state (complex n²
  // each); k², V, cos/sin of the phase, background, detector phase, local-flow coefficients, quantum-pressure
  // work (real n² each).
  const arrays = 7 * 16 * n * n + 11 * 8 * n * n;
  console.log(
    `memory ${n}²: peak resident set grows by ${((peak - before) / 2 ** 20).toFixed(0)} MiB during one ` +
      `realisation; the arrays it allocates ≈ ${(arrays / 2 ** 20).toFixed(0)} MiB (${
        (arrays / (n * n)).toFixed(0)
      } ` +
      "bytes per grid point)",
  );
}

const ref = await numpy();
console.log("grid   γ      ours best/median ms   numpy best/median ms   ratio (best)");
for (const n of SIZES) {
  for (const gamma of [0, 0.01]) {
    const [b, m] = ours(n, gamma);
    const np = ref.get(`${n}/${gamma}`);
    console.log(
      `${String(n).padStart(3)}²  ${gamma.toFixed(2)}   ${b.toFixed(2).padStart(7)} / ${
        m.toFixed(2).padEnd(7)
      }` +
        `      ${
          np ? `${np[0].toFixed(2).padStart(7)} / ${np[1].toFixed(2).padEnd(7)}` : "      —        "
        }` +
        `       ${np ? (b / np[0]).toFixed(2) : "—"}`,
    );
  }
}

for (const n of SIZES) {
  const np = ref.get(`${n}/fft`);
  const b = fftPair(n);
  console.log(
    `FFT pair ${n}²: fft.js ${b.toFixed(2)} ms, numpy ${np ? np[0].toFixed(2) : "—"} ms` +
      (np ? `, ratio ${(b / np[0]).toFixed(2)}` : ""),
  );
}

// Memory per realisation: a fresh process per size runs one realisation; peak resident set (VmHWM) minus the
// resident set before the realisation started.
for (const n of [256, 512]) {
  const self = new URL(import.meta.url).pathname;
  const r = await new Deno.Command(Deno.execPath(), {
    args: ["run", "--allow-all", self, "--memory", String(n)],
  })
    .output();
  console.log(new TextDecoder().decode(r.stdout).trim());
}
