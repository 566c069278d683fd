/**
 * Peak memory of one long realisation, to show that frames stream to the store (memory does not grow with the
 * run's duration). Runs the same single-realisation study for a short and a 4× longer duration and samples the
 * process's resident set size (main thread + worker) every 20 ms.
 *
 *   deno run -A study/memory_bench.ts [vortices=200] [sampleInterval=0.002] [shortDuration=0.5]
 */
import { normalizeText } from "../test/_study.ts";
import { runStudy } from "./runner.ts";
import { createProgress } from "./progress.ts";

const N = Number(Deno.args[0] ?? 200);
const DT = Number(Deno.args[1] ?? 0.002);
const SHORT = Number(Deno.args[2] ?? 0.5);

function studyText(duration: number): string {
  return `
name: memory-bench
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: ${N}, polarity: 0, shape: uniform-disk, radius: 1.0, minSeparation: 0.02 }
  annihilationDistance: 0.005
realisations: 1
seed: 3
run: { duration: ${duration}, sampleInterval: ${DT}, tolerance: 1.0e-8 }
`;
}

async function peakRss(duration: number): Promise<{ peak: number; frames: number; seconds: number }> {
  const study = normalizeText(studyText(duration));
  const db = Deno.makeTempFileSync({ suffix: ".sqlite" });
  let peak = 0;
  const timer = setInterval(() => {
    peak = Math.max(peak, Deno.memoryUsage().rss);
  }, 20);
  const t0 = performance.now();
  await runStudy(study, {
    dbPath: db,
    workers: 1,
    progress: createProgress({ quiet: true }),
    provenance: { toolVersion: "bench", denoVersion: Deno.version.deno, gitCommit: null },
  });
  clearInterval(timer);
  const frames = Math.round(duration / DT) + 1;
  return { peak, frames, seconds: (performance.now() - t0) / 1000 };
}

const short = await peakRss(SHORT);
const long = await peakRss(4 * SHORT);
const mb = (b: number) => (b / 2 ** 20).toFixed(1);
console.log(`N = ${N} vortices, frames every ${DT}`);
console.log(`  ${short.frames} frames: peak RSS ${mb(short.peak)} MiB (${short.seconds.toFixed(1)} s)`);
console.log(`  ${long.frames} frames: peak RSS ${mb(long.peak)} MiB (${long.seconds.toFixed(1)} s)`);
console.log(
  `  frame data written by the long run: ${mb(long.frames * N * 29)} MiB; RSS ratio long/short ${
    (long.peak / short.peak).toFixed(2)
  }`,
);
