/**
 * examples/imported-walkers.yaml: the example study that imports the synthetic walkers is a valid study for the
 * imported-tracks-2d engine, and one of its realisations runs through the runner's pipeline (executeRealisation)
 * with every record time as a frame.
 */
import { assert, assertEquals } from "../_assert.ts";
import type { Engine } from "../../engines/contract.ts";
import { ENGINES } from "../../engines/registry.ts";
import { IMPORTED_ENGINES } from "../../engines/imported/mod.ts";
import { parseStudyText } from "../../study/load.ts";
import { formatProblems } from "../../study/problems.ts";
import { normalizeStudy } from "../../study/normalize.ts";
import { planStudy } from "../../study/plan.ts";
import { executeRealisation } from "../../study/execute.ts";
import { taskFor } from "../../study/runner.ts";
import type { FrameRow } from "../../store/db.ts";
import { WALKERS } from "./make_walkers.ts";

// Until the lead registers the imported engines, add them to the list the loader and the executor use.
// deno-lint-ignore no-explicit-any
const engines: Engine<any>[] = [
  ...ENGINES,
  ...IMPORTED_ENGINES.filter((e) => !ENGINES.some((r) => r.id === e.id)),
];
const ROOT = new URL("../../", import.meta.url);

// The study format is spindrift's own (study/schema.ts); common practice, no source.
Deno.test("examples/imported-walkers.yaml: loads, plans every realisation and runs one with every record", async () => {
  const path = new URL("examples/imported-walkers.yaml", ROOT).pathname;
  const text = await Deno.readTextFile(path);
  const loaded = parseStudyText(text, "examples/imported-walkers.yaml", { engines });
  if (!loaded.ok) throw new Error(formatProblems(loaded.problems));
  const study = normalizeStudy(loaded.study, { text, sourcePath: path, engines });
  const plan = planStudy(study);
  assertEquals(plan.length, WALKERS.realisations);
  // The example's paths are relative to the study file's folder, whatever this test's working directory is.
  const rooted = taskFor(study, plan[3]);
  const frames: FrameRow[] = [];
  const outcome = await executeRealisation(
    rooted,
    (f) => frames.push(...f),
    (id) => engines.find((e) => e.id === id),
  );
  assertEquals(outcome.status, "done", outcome.error);
  assertEquals(frames.length, WALKERS.times);
  assertEquals(frames[WALKERS.times - 1].t, Number(((WALKERS.times - 1) * WALKERS.dt).toFixed(10)));
  assert(outcome.series.msd !== undefined, "the msd series is recorded");
});
