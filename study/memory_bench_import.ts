/**
 * Peak memory of the runner + store path on a long, wide realisation: a generated track file of N objects ×
 * T frames is imported through `runStudy` (one worker) for T and 4T frames, sampling the process's resident
 * set size (main thread + worker) every 20 ms. Frames stream to the database, so the peak should not grow
 * with T although the stored frame data grows fourfold.
 *
 *   deno run -A study/memory_bench_import.ts [objects=2000] [frames=250] [x16: also 16× the frames]
 */
import { normalizeText } from "../test/_study.ts";
import { runStudy } from "./runner.ts";
import { createProgress } from "./progress.ts";

const N = Number(Deno.args[0] ?? 2000);
const T = Number(Deno.args[1] ?? 250);
const DT = 0.01;

async function writeTracks(path: string, frames: number): Promise<void> {
  const file = await Deno.create(path);
  const enc = new TextEncoder();
  await file.write(enc.encode("t,id,x,y,circulation\n"));
  const lines: string[] = new Array(N);
  for (let k = 0; k < frames; k++) {
    const t = Number((k * DT).toFixed(6));
    for (let i = 0; i < N; i++) {
      const r = 1 + i / N + 0.01 * Math.sin(0.1 * k + i);
      const phi = 0.002 * k * (i % 5 + 1) + i;
      lines[i] = `${t},${i},${r * Math.cos(phi)},${r * Math.sin(phi)},${i % 2 === 0 ? 1 : -1}\n`;
    }
    const chunk = enc.encode(lines.join(""));
    let off = 0;
    while (off < chunk.length) off += await file.write(chunk.subarray(off));
  }
  file.close();
}

async function peak(frames: number): Promise<{ rss: number; seconds: number; dbBytes: number }> {
  const dir = Deno.makeTempDirSync();
  await writeTracks(`${dir}/r0.csv`, frames);
  const text = `
name: memory-bench-import
engine: imported-tracks-2d
parameters: { source: { files: "r{index}.csv" } }
realisations: 1
seed: 1
run: { duration: ${((frames - 1) * DT).toFixed(6)}, sampleInterval: ${DT} }
`;
  const study = normalizeText(text, `${dir}/study.yaml`);
  const db = `${dir}/bench.sqlite`;
  let rss = 0;
  const gc = (globalThis as { gc?: () => void }).gc;
  const timer = setInterval(() => {
    gc?.();
    rss = Math.max(rss, Deno.memoryUsage().rss);
  }, 20);
  const t0 = performance.now();
  const report = await runStudy(study, {
    dbPath: db,
    workers: 1,
    progress: createProgress({ quiet: true }),
    provenance: { toolVersion: "bench", denoVersion: Deno.version.deno, gitCommit: null },
  });
  clearInterval(timer);
  if (report.completed !== 1) throw new Error(`the import failed: ${JSON.stringify(report.failures)}`);
  const seconds = (performance.now() - t0) / 1000;
  const dbBytes = Deno.statSync(db).size;
  Deno.removeSync(dir, { recursive: true });
  return { rss, seconds, dbBytes };
}

const mb = (b: number) => (b / 2 ** 20).toFixed(1);
const short = await peak(T);
const long = await peak(4 * T);
const longer = Deno.args[2] === "x16" ? await peak(16 * T) : null;
console.log(`${N} objects per frame`);
console.log(
  `  ${T} frames: peak RSS ${mb(short.rss)} MiB, database ${mb(short.dbBytes)} MiB (${
    short.seconds.toFixed(1)
  } s)`,
);
console.log(
  `  ${4 * T} frames: peak RSS ${mb(long.rss)} MiB, database ${mb(long.dbBytes)} MiB (${
    long.seconds.toFixed(1)
  } s)`,
);
if (longer) {
  console.log(`  ${16 * T} frames: peak RSS ${mb(longer.rss)} MiB, database ${mb(longer.dbBytes)} MiB`);
}
console.log(
  `  RSS ratio long/short ${(long.rss / short.rss).toFixed(2)}; database ratio ${
    (long.dbBytes / short.dbBytes).toFixed(2)
  }`,
);
