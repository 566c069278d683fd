/**
 * The record stored with a realisation (argv, environment additions, work folder, seed) reproduces it exactly:
 * the seed follows from the plan, running the recorded command line again writes the same bytes, and running the
 * realisation again stores the same frames, series, scalars and record.
 */
import { assert, assertEquals } from "../_assert.ts";
import { RandomStream } from "../../engines/random.ts";
import { programSeed } from "../../engines/external/mod.ts";
import { planStudy } from "../../study/plan.ts";
import { externalTask, loadStudyText, programRun, runTask, walkerStudyText } from "./_helpers.ts";

// Reproducibility requirement of the project (the same inputs give bit-identical stored results); common
// practice, no source.

Deno.test("the stored command line, environment and seed reproduce a realisation exactly", async () => {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-repro-" });
  try {
    const study = loadStudyText(
      walkerStudyText({ realisations: 3, keepWorkFolders: "always" }),
      `${dir}/s.yaml`,
    );
    const r = planStudy(study)[2];
    const task = externalTask(study, r, `${dir}/work`);
    const first = await runTask(task);
    assertEquals(first.outcome.status, "done", first.outcome.error);
    const run = programRun(first.outcome);
    const argv = run.detail.argv as string[];
    const env = run.detail.environment as Record<string, string>;
    const folder = run.detail.work_folder as string;

    // The seed is the plan's: the first two uniforms of the realisation's stream (program_seed.ts).
    const seed = programSeed(RandomStream.fromState(r.seedState));
    assertEquals(run.detail.seed, seed.text);
    assertEquals([run.data.seed_high, run.data.seed_low], [seed.high, seed.low]);
    assertEquals(argv[argv.indexOf("--seed") + 1], seed.text);
    assertEquals(env.SPINDRIFT_SEED, seed.text);

    // Running the recorded command line in the recorded folder writes the same bytes.
    const output = run.detail.output as string;
    const original = await Deno.readFile(output);
    await Deno.remove(output);
    const again = await new Deno.Command(argv[0], { args: argv.slice(1), cwd: folder, env, stdout: "piped" })
      .output();
    assertEquals(again.code, 0);
    assertEquals(new TextDecoder().decode(again.stdout), run.detail.stdout_tail);
    assert(original.length > 1000);
    assertEquals(await Deno.readFile(output), original);

    // Running the realisation again stores the same results and the same record.
    const second = await runTask(task);
    assertEquals(
      second.frames.map((f) => [f.k, f.t, f.n, f.layout, Array.from(f.data)]),
      first.frames.map((f) => [f.k, f.t, f.n, f.layout, Array.from(f.data)]),
    );
    assertEquals(second.outcome.scalars, first.outcome.scalars);
    assertEquals(second.outcome.series, first.outcome.series);
    assertEquals(second.outcome.events, first.outcome.events);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});
