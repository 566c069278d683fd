import { assert, assertEquals } from "../test/_assert.ts";
import { ENGINES } from "../engines/registry.ts";
import { loadStudy } from "./load.ts";
import { normalizeStudy } from "./normalize.ts";
import { describeFirstRealisation } from "./describe.ts";
import { formatProblems } from "./problems.ts";
import { starterEngines, starterStudy } from "./starter.ts";
import { tempDir } from "../test/_tmp.ts";

Deno.test("starterStudy: every registered engine has a starter that passes what `spindrift check` checks", async () => {
  assertEquals(starterEngines().map((e) => e.id), ENGINES.map((e) => e.id), "an engine without a starter");
  const dir = tempDir();
  for (const engine of ENGINES) {
    const file = `${dir}/${engine.id}.yaml`;
    const text = starterStudy(engine, { name: `start-${engine.id}`, file, seed: 4711 });
    await Deno.writeTextFile(file, text);
    const loaded = await loadStudy(file);
    assert(loaded.ok, `${engine.id}:\n${loaded.ok ? "" : formatProblems(loaded.problems)}\n${text}`);
    assertEquals(loaded.warnings.length, 0, `${engine.id}: ${formatProblems(loaded.warnings)}`);
    const study = normalizeStudy(loaded.study, { text, sourcePath: file });
    assertEquals(study.engine.id, engine.id);
    assert(study.realisations >= 20, `${engine.id}: enough realisations for the analysis' intervals`);
    const first = await describeFirstRealisation(study);
    assert(!("problem" in first), `${engine.id}: ${"problem" in first ? first.problem : ""}`);
    // Every line is a comment, blank, or YAML the loader read: nothing left as a placeholder.
    assert(!/TODO|FIXME|\.\.\./.test(text), `${engine.id}: placeholder in the starter`);
  }
});

Deno.test("starterStudy: the seed is written only for engines that draw random numbers", () => {
  for (const engine of ENGINES) {
    const text = starterStudy(engine, { name: "s", file: "s.yaml", seed: 31337 });
    assertEquals(/^seed: 31337 /m.test(text), engine.usesSeed !== false, engine.id);
  }
});
