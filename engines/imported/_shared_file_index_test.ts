import { assert, assertEquals } from "../../test/_assert.ts";
import { EngineFailure } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { importedTracks2dEngine } from "./engine.ts";
import { planRead } from "./plan.ts";
import { sharedFileIndex } from "./_shared_file_index.ts";
import { captureSink, controls, type CopiedFrame } from "./_test_helpers.ts";

const RUNS = 3, N = 4, T = 5;

function rowOf(run: number, k: number, i: number): string {
  return `${k * 0.5},${i},${(run + 1) * Math.cos(i + k)},${Math.sin(i * run + k)},${i % 2 ? 1 : -1}`;
}

/** The same walkers written as one file per realisation and as one shared file (grouped or interleaved). */
function writeFiles(dir: string, interleaved: boolean): void {
  const shared = ["# tracks of three runs", "run,t,id,x,y,circulation"];
  for (let run = 0; run < RUNS; run++) {
    const own = ["t,id,x,y,circulation"];
    for (let k = 0; k < T; k++) for (let i = 0; i < N; i++) own.push(rowOf(run, k, i));
    Deno.writeTextFileSync(`${dir}/r${run}.csv`, own.join("\n") + "\n");
  }
  if (interleaved) {
    for (let k = 0; k < T; k++) {
      for (let run = 0; run < RUNS; run++) {
        for (let i = 0; i < N; i++) shared.push(`${run},${rowOf(run, k, i)}`);
      }
    }
  } else {
    for (let run = 0; run < RUNS; run++) {
      for (let k = 0; k < T; k++) for (let i = 0; i < N; i++) shared.push(`${run},${rowOf(run, k, i)}`);
      shared.push("");
    }
  }
  Deno.writeTextFileSync(`${dir}/all.csv`, shared.join("\n") + "\n");
  Deno.writeTextFileSync(
    `${dir}/all.jsonl`,
    shared.slice(2).filter((l) => l.length > 0).map((l) => {
      const [run, t, id, x, y, c] = l.split(",").map(Number);
      return JSON.stringify({ run, t, id, x, y, circulation: c });
    }).join("\n") + "\n",
  );
}

async function frames(dir: string, source: unknown, index: number): Promise<CopiedFrame[]> {
  const params = importedTracks2dEngine.paramsSchema.parse({ source });
  const sink = captureSink();
  await importedTracks2dEngine.run({
    params,
    controls: controls((T - 1) * 0.5, 0.5),
    rng: RandomStream.fromState([1, 2, 3, 4]),
    realisationIndex: index,
    baseDirectory: dir,
  }, sink);
  return sink.frames;
}

// Reading only a realisation's byte ranges must give exactly what streaming its own file gives (spindrift's own
// reader contract; common practice, no source).
Deno.test("a shared file read through its index gives each realisation's own frames, grouped or interleaved", async () => {
  for (const interleaved of [false, true]) {
    const dir = Deno.makeTempDirSync();
    try {
      writeFiles(dir, interleaved);
      const plan = planRead(
        importedTracks2dEngine.paramsSchema.parse({ source: { file: "all.csv", realisationColumn: "run" } }),
        2,
        1,
        dir,
      );
      const index = await sharedFileIndex(plan);
      assert(index !== null, "an index was built");
      assertEquals(index.ranges.get(1)?.length, interleaved ? T : 1);
      for (let run = 0; run < RUNS; run++) {
        const own = await frames(dir, { files: "r{index}.csv" }, run);
        assertEquals(
          await frames(dir, { file: "all.csv", realisationColumn: "run" }, run),
          own,
          `csv run ${run}`,
        );
        assertEquals(
          await frames(dir, { file: "all.jsonl", realisationColumn: "run" }, run),
          own,
          `jsonl ${run}`,
        );
      }
    } finally {
      Deno.removeSync(dir, { recursive: true });
    }
  }
});

Deno.test("a bad value in a shared file is reported at its own line, through the index", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    writeFiles(dir, false);
    const lines = Deno.readTextFileSync(`${dir}/all.csv`).split("\n");
    const at = lines.findIndex((l) => l.startsWith("1,1,2,")); // realisation 1, t = 1, vortex 2
    const cells = lines[at].split(",");
    cells[3] = "1.2.3";
    lines[at] = cells.join(",");
    Deno.writeTextFileSync(`${dir}/all.csv`, lines.join("\n"));
    let error: unknown;
    try {
      await frames(dir, { file: "all.csv", realisationColumn: "run" }, 1);
    } catch (e) {
      error = e;
    }
    assert(error instanceof EngineFailure, String(error));
    assert(error.message.includes(`all.csv:${at + 1} column 'x': got '1.2.3'`), error.message);
    assertEquals((await frames(dir, { file: "all.csv", realisationColumn: "run" }, 2)).length, T);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
