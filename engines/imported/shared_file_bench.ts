/**
 * One file holding every realisation (`source.realisationColumn`) against one file per realisation: 60
 * realisations of 100 walkers × 150 record times (about 9 MB of CSV in all), imported one after another in this
 * process through the engine, as a worker does. Prints seconds and the ratio shared/split.
 *
 *   deno run -A engines/imported/shared_file_bench.ts [realisations=60]
 */
import { importedTracks2dEngine } from "./engine.ts";
import { RandomStream } from "../random.ts";

const R = Number(Deno.args[0] ?? 60);
const N = 100, T = 150, DT = 0.1;

async function main(): Promise<void> {
  const dir = Deno.makeTempDirSync({ prefix: "spindrift-bench-" });
  try {
    const shared: string[] = ["run,t,id,x,y,circulation"];
    for (let r = 0; r < R; r++) {
      const own: string[] = ["t,id,x,y,circulation"];
      for (let k = 0; k < T; k++) {
        for (let i = 0; i < N; i++) {
          const row = `${(k * DT).toFixed(1)},${i},${Math.cos(i + r + 0.01 * k).toFixed(6)},${
            Math.sin(i * r + 0.02 * k).toFixed(6)
          },${i % 2 ? 1 : -1}`;
          shared.push(`${r},${row}`);
          own.push(row);
        }
      }
      Deno.writeTextFileSync(`${dir}/r${r}.csv`, own.join("\n") + "\n");
    }
    Deno.writeTextFileSync(`${dir}/all.csv`, shared.join("\n") + "\n");
    const controls = { duration: (T - 1) * DT, sampleInterval: DT, tolerance: 1e-9, maxDistance: 1e6 };
    const sink = { frame() {}, event() {} };
    const time = async (source: unknown): Promise<number> => {
      const params = importedTracks2dEngine.paramsSchema.parse({ source });
      const t0 = performance.now();
      for (let r = 0; r < R; r++) {
        await importedTracks2dEngine.run(
          {
            params,
            controls,
            rng: RandomStream.fromState([1, 2, 3, 4]),
            realisationIndex: r,
            baseDirectory: dir,
          },
          sink,
        );
      }
      return (performance.now() - t0) / 1000;
    };
    const split = await time({ files: "r{index}.csv" });
    const sharedS = await time({ file: "all.csv", realisationColumn: "run" });
    const mb = Deno.statSync(`${dir}/all.csv`).size / 1e6;
    console.log(
      `${R} realisations, ${mb.toFixed(1)} MB shared file: split files ${split.toFixed(2)} s, shared file ` +
        `${sharedS.toFixed(2)} s, ratio shared/split ${(sharedS / split).toFixed(2)}`,
    );
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
}

// A script (deno run), not a deno bench file: it times whole imports, repeatedly, against each other.
if (import.meta.main) await main();
