/**
 * The study-file corpus: every file in `test/studies/good/` loads, normalizes and plans; every file in
 * `test/studies/bad/` reports exactly the problems in its sibling `.expected` file (formatted by
 * `formatProblems`, with the file named by its base name). Each expected file was written by running the
 * loader and then checked by hand, problem by problem, against the YAML (line, column, field path, value and
 * message). Files with broken YAML syntax end in `.broken-yaml`, so that `deno fmt` leaves them alone.
 * To refresh them after a deliberate change of wording, run
 * `SPINDRIFT_UPDATE_EXPECTED=1 deno test -A test/studies_test.ts` and review the diff before committing.
 */
import { deepStrictEqual, equal, ok } from "node:assert/strict";
import { parse, stringify } from "yaml";
import { engineIds } from "../engines/registry.ts";
import { parseStudyText } from "../study/load.ts";
import { normalizeStudy } from "../study/normalize.ts";
import { planStudy } from "../study/plan.ts";
import { formatProblems } from "../study/problems.ts";

const GOOD = new URL("./studies/good/", import.meta.url);
const BAD = new URL("./studies/bad/", import.meta.url);
const UPDATE = Deno.env.get("SPINDRIFT_UPDATE_EXPECTED") === "1";
const KNOWN_ENGINES = engineIds().join(", ");

/** Study files of a folder: `*.yaml`, and `*.broken-yaml` for YAML that `deno fmt` cannot parse. */
function yamlFiles(dir: URL): string[] {
  return [...Deno.readDirSync(dir)]
    .filter((e) => e.isFile && /\.(yaml|broken-yaml)$/.test(e.name))
    .map((e) => e.name)
    .sort();
}

function load(dir: URL, name: string) {
  const text = Deno.readTextFileSync(new URL(name, dir));
  return { text, result: parseStudyText(text, name) };
}

Deno.test("study corpus: every good study loads, normalizes and plans", () => {
  const names = yamlFiles(GOOD);
  ok(names.length >= 3);
  for (const name of names) {
    const { text, result } = load(GOOD, name);
    if (!result.ok) throw new Error(`${name} should load:\n${formatProblems(result.problems)}`);
    const study = normalizeStudy(result.study, { text, sourcePath: name });
    const plan = planStudy(study);
    equal(plan.length, study.points.length * study.realisations, name);
    equal(new Set(plan.map((r) => r.key)).size, plan.length, `${name}: realisation keys are unique`);
  }
});

Deno.test("study corpus: small.yaml expands to the documented points", () => {
  const { text, result } = load(GOOD, "small.yaml");
  ok(result.ok);
  const study = normalizeStudy(result.study, { text, sourcePath: "small.yaml" });
  deepStrictEqual(study.points.map((p) => p.label), [
    "initial.count=16, friction.alpha=0, friction.alphaPrime=0",
    "initial.count=16, friction.alpha=0.05, friction.alphaPrime=0.001",
    "initial.count=32, friction.alpha=0, friction.alphaPrime=0",
    "initial.count=32, friction.alpha=0.05, friction.alphaPrime=0.001",
  ]);
  equal(study.run.workers, 2);
  equal(study.run.maxDistance, 1e6);
  equal(study.observables.classification.outwardCosine, 0.5);
});

/** The same YAML value with the keys of every map in reverse order. */
function reverseKeys(v: unknown): unknown {
  if (Array.isArray(v)) return v.map(reverseKeys);
  if (typeof v === "object" && v !== null) {
    return Object.fromEntries(Object.entries(v).reverse().map(([k, w]) => [k, reverseKeys(w)]));
  }
  return v;
}

Deno.test("study corpus: hashes and seeds do not change when every map's keys are written in reverse", () => {
  for (const name of yamlFiles(GOOD)) {
    const { text, result } = load(GOOD, name);
    const reversedText = stringify(reverseKeys(parse(text)));
    const reversed = parseStudyText(reversedText, name);
    ok(result.ok && reversed.ok, name);
    const a = normalizeStudy(result.study, { text, sourcePath: name });
    const b = normalizeStudy(reversed.study, { text: reversedText, sourcePath: name });
    equal(b.hash, a.hash, name);
    const seeds = (s: typeof a) => new Set(planStudy(s).map((r) => `${r.key}/${r.seedHex}`));
    deepStrictEqual(seeds(b), seeds(a), name);
  }
});

Deno.test("study corpus: every bad study reports exactly its expected problems", () => {
  const names = yamlFiles(BAD);
  const failures: string[] = [];
  const codes = new Set<string>();
  for (const name of names) {
    const { result } = load(BAD, name);
    if (result.ok) {
      failures.push(`${name}: loaded without problems`);
      continue;
    }
    for (const p of result.problems) {
      codes.add(p.code);
      if (p.code !== "file-unreadable") ok(p.line >= 1 && p.column >= 1, `${name}: ${JSON.stringify(p)}`);
    }
    // The list of registered engines grows; expected files name it `<known engines>`.
    const got = formatProblems(result.problems).replaceAll(KNOWN_ENGINES, "<known engines>") + "\n";
    const expectedUrl = new URL(name.replace(/\.(yaml|broken-yaml)$/, ".expected"), BAD);
    if (UPDATE) Deno.writeTextFileSync(expectedUrl, got);
    let expected: string;
    try {
      expected = Deno.readTextFileSync(expectedUrl);
    } catch {
      failures.push(`${name}: no .expected file`);
      continue;
    }
    if (got !== expected) failures.push(`${name}:\n--- expected\n${expected}--- got\n${got}`);
  }
  if (failures.length) throw new Error(failures.join("\n"));
  ok(names.length >= 15, `${names.length} bad studies; at least 15 kinds are required`);
  ok(codes.size >= 12, `problem codes covered: ${[...codes].join(", ")}`);
});

Deno.test("every bundled example study in examples/ loads, normalizes and plans without problems", async () => {
  const dir = new URL("../examples/", import.meta.url);
  const names = [...Deno.readDirSync(dir)].map((e) => e.name).filter((n) => n.endsWith(".yaml")).sort();
  ok(names.length >= 5, `examples: ${names.join(", ")}`);
  for (const name of names) {
    const text = await Deno.readTextFile(new URL(name, dir));
    const loaded = parseStudyText(text, name);
    ok(loaded.ok, loaded.ok ? "" : formatProblems(loaded.problems));
    const study = normalizeStudy(loaded.study, { text, sourcePath: new URL(name, dir).pathname });
    ok(planStudy(study).length > 0, `${name}: something to run`);
  }
});
