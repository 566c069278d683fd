import { deepStrictEqual, equal, match, ok } from "node:assert/strict";
import { z } from "zod";
import type { Engine } from "../engines/contract.ts";
import { loadStudy, parseStudyText } from "./load.ts";
import { normalizeStudy } from "./normalize.ts";
import { formatProblems, type StudyProblem } from "./problems.ts";
import { MAX_POINTS } from "./schema.ts";
import { TOY_ENGINE, toyStudy } from "./_test_engine.ts";

const engines = [TOY_ENGINE];

// deno-lint-ignore no-explicit-any
function problems(text: string, opts: { engines: readonly Engine<any>[] } = { engines }): StudyProblem[] {
  const r = parseStudyText(text, "t.yaml", opts);
  if (r.ok) throw new Error("expected problems, the study loaded");
  return r.problems;
}

function lines(text: string): string[] {
  return formatProblems(problems(text)).split("\n");
}

Deno.test("parseStudyText accepts a valid study, fills section defaults and keeps parameters as written", () => {
  const r = parseStudyText(toyStudy(), "t.yaml", { engines });
  ok(r.ok);
  const s = r.study;
  equal(s.realisations, 1);
  equal(s.run.tolerance, 1e-9);
  equal(s.run.maxDistance, 1e6);
  equal(s.run.workers, undefined);
  deepStrictEqual(s.observables.record, ["cluster", "evaporation", "msd"]);
  // docs/methods.md §8: f = 0.3, k = 2, K = 3 frames, outward cosine 0.5; speed tolerance 0.25 (engines/observables).
  deepStrictEqual(s.observables.classification, {
    separationFactor: 0.3,
    radiusFactor: 2,
    stickyFrames: 3,
    outwardCosine: 0.5,
    speedTolerance: 0.25,
  });
  deepStrictEqual(s.parameters, { count: 8, shape: { kind: "disk", radius: 2 } }); // engine defaults not applied
  equal(r.text, toyStudy());
});

Deno.test("parseStudyText reports a YAML syntax error with its line and column, and nothing else", () => {
  deepStrictEqual(lines("name: x\nrun: { duration: 1\nseed: 3\n"), [
    "t.yaml:3:1  (whole file): YAML syntax: a map opened with { above is not closed with } (or this line is not indented enough)",
  ]);
});

Deno.test("parseStudyText reports tabs and several documents as YAML problems", () => {
  const tab = problems("name: x\nrun:\n\tduration: 1\n");
  equal(tab[0].code, "yaml-syntax");
  equal(tab[0].line, 3);
  ok(tab[0].message.includes("indent with spaces"));
  const docs = problems(toyStudy() + "---\nname: y\n");
  equal(docs[0].code, "yaml-syntax");
  ok(docs[0].message.includes("several documents"));
});

Deno.test("parseStudyText reports a duplicate key at the second occurrence and still checks the rest", () => {
  const p = problems(toyStudy("realisations: 2\nrealisations: 0\n"));
  deepStrictEqual(p.map((x) => [x.code, x.line, x.column]), [["duplicate-key", 12, 1], [
    "out-of-range",
    12,
    15,
  ]]);
  equal(formatProblems(p.slice(0, 1)), "t.yaml:12:1  realisations: is given twice in the same map; keep one");
});

Deno.test("parseStudyText reports aliases without anchors and unknown tags", () => {
  const alias = problems(toyStudy("realisations: *many\n"));
  deepStrictEqual(alias.map((x) => [x.code, x.line, x.column]), [["yaml-reference", 11, 15]]);
  ok(alias[0].message.includes("&many"));
  const tag = problems(toyStudy("realisations: !big 3\n"));
  equal(tag[0].code, "yaml-reference");
  equal(tag[0].line, 11);
});

Deno.test("parseStudyText refuses empty files and files that are not a map", () => {
  deepStrictEqual(problems("").map((p) => p.code), ["not-a-study"]);
  deepStrictEqual(problems("# only a comment\n").map((p) => p.code), ["not-a-study"]);
  deepStrictEqual(lines("- name: x\n- engine: y\n"), [
    "t.yaml:1:1  (whole file): got a list of 2 items; a study file is a map of sections (name, engine, parameters, seed, run, …)",
  ]);
  equal(problems("just text\n")[0].value, "just text");
});

Deno.test("parseStudyText lists every missing required section at once", () => {
  deepStrictEqual(lines("name: toy\n"), [
    "t.yaml:1:1  engine: required: the engine to run, one of toy-engine",
    "t.yaml:1:1  parameters: required: a map",
    "t.yaml:1:1  seed: required: an integer or a text (non-empty, at most 200 characters)",
    "t.yaml:1:1  run: required: a map with keys duration, sampleInterval, tolerance, maxDistance, workers, threads, cluster",
  ]);
});

Deno.test("parseStudyText reports an unknown engine with a suggestion and still checks the other sections", () => {
  const text = toyStudy().replace("engine: toy-engine", "engine: toy-engin").replace(
    "duration: 10",
    "duration: -1",
  );
  deepStrictEqual(lines(text), [
    't.yaml:3:9  engine: got toy-engin; is not a known engine; did you mean "toy-engine"? Known engines: toy-engine',
    "t.yaml:9:13  run.duration: got -1; must be a number > 0",
  ]);
});

Deno.test("parseStudyText finds unknown keys that the engine's stripping schema would drop silently", () => {
  const text = toyStudy().replace("  count: 8\n", "  count: 8\n  polarty: 0.5\n");
  deepStrictEqual(lines(text), [
    't.yaml:6:3  parameters.polarty: unknown key; did you mean "polarity"? Allowed here: count, polarity, shape, friction, label',
  ]);
});

Deno.test("parseStudyText maps engine issues in union options and refinements to their lines", () => {
  const text = toyStudy().replace("count: 8", "count: 7").replace("radius: 2", "radius: 2, side: 3");
  deepStrictEqual(lines(text), [
    "t.yaml:5:10  parameters.count: got 7; count 7 is odd but polarity is 0",
    "t.yaml:6:35  parameters.shape.side: unknown key; allowed here: kind, radius",
  ]);
});

Deno.test("parseStudyText reports a swept value that fails the engine at that value in the sweep", () => {
  const text = toyStudy("sweep:\n  grid:\n    count: [8, 9, -2]\n");
  deepStrictEqual(lines(text), [
    "t.yaml:13:16  sweep.grid.count[1]: got 9; count 9 is odd but polarity is 0",
    "t.yaml:13:19  sweep.grid.count[2]: got -2; must be an integer ≥ 1",
  ]);
});

Deno.test("parseStudyText reports a rule broken only at some points at the base value, naming the point", () => {
  const text = toyStudy("sweep:\n  grid:\n    polarity: [0.5, 0]\n").replace(
    "count: 8",
    "count: 7\n  polarity: 0.5",
  );
  deepStrictEqual(lines(text), [
    "t.yaml:5:10  parameters.count: got 7; count 7 is odd but polarity is 0 (at sweep point polarity=0)",
  ]);
});

Deno.test("parseStudyText reports a swept path missing from the form the base parameters take", () => {
  const text = toyStudy("sweep:\n  grid:\n    shape.side: [1, 2]\n");
  deepStrictEqual(lines(text), [
    't.yaml:13:5  sweep.grid["shape.side"]: parameters.shape has no field side in the form it takes at point shape.side=1 (allowed there: kind, radius); change the base parameters or sweep parameters.shape as a whole',
  ]);
});

Deno.test("parseStudyText reports unknown keys inside swept maps at their place in the sweep", () => {
  const text = toyStudy("sweep:\n  grid:\n    shape: [{kind: square, side: 1, radius: 2}]\n");
  deepStrictEqual(lines(text), [
    "t.yaml:13:37  sweep.grid.shape[0].radius: unknown key; allowed here: kind, side",
  ]);
});

Deno.test("parseStudyText refuses a sweep whose points are identical once defaults are applied", () => {
  const text = toyStudy(
    "sweep:\n  grid:\n    friction: [{}, {alpha: 0}, {alpha: 1}, {alpha: 0, alphaPrime: 0}]\n",
  );
  deepStrictEqual(lines(text), [
    "t.yaml:11:1  sweep: points 0 (friction={}) and 1 (friction={alpha: 0}) have identical parameters once defaults are applied (and 1 more pair); each point must differ",
  ]);
});

Deno.test("parseStudyText refuses empty sweep lists and empty zip groups", () => {
  deepStrictEqual(lines(toyStudy("sweep:\n  grid: { count: [] }\n  zip:\n    - {}\n")), [
    "t.yaml:12:18  sweep.grid.count: got []; must list at least one value",
    "t.yaml:14:7  sweep.zip[0]: must list at least one parameter path",
  ]);
});

Deno.test("parseStudyText checks a long zip group quickly (repeats found in linear time)", () => {
  const n = 5000;
  const list = (f: (i: number) => number) => JSON.stringify(Array.from({ length: n }, (_, i) => f(i)));
  const text = toyStudy(
    `sweep:\n  zip:\n    - { count: ${list((i) => 2 * i + 2)}, polarity: ${list((i) => (i % 2) / 2)} }\n`,
  );
  const t0 = performance.now();
  ok(parseStudyText(text, "t.yaml", { engines }).ok);
  const ms = performance.now() - t0;
  ok(ms < 5000, `took ${ms.toFixed(0)} ms`);
});

Deno.test("parseStudyText refuses sweeps with more than MAX_POINTS points", () => {
  const values = JSON.stringify(Array.from({ length: 101 }, (_, i) => 2 * i + 2));
  const text = toyStudy(
    `sweep:\n  grid:\n    count: ${values}\n    label: ${
      JSON.stringify(Array.from({ length: 100 }, (_, i) => `l${i}`))
    }\n`,
  );
  const p = problems(text);
  deepStrictEqual(p.map((x) => [x.code, x.path]), [["sweep-points", "sweep"]]);
  ok(p[0].message.includes(`expands to 10100 parameter points; at most ${MAX_POINTS}`));
});

Deno.test("parseStudyText turns an exception thrown by an engine's check into a problem", () => {
  const throwing: Engine<unknown> = {
    ...TOY_ENGINE,
    id: "throwing",
    paramsSchema: z.object({ n: z.number() }).superRefine(() => {
      throw new Error("engine bug");
    }) as z.ZodType<unknown>,
  };
  const text = toyStudy().replace("engine: toy-engine", "engine: throwing").replace(
    /parameters:\n( {2}.*\n)+/,
    "parameters: { n: 1 }\n",
  );
  const p = problems(text, { engines: [throwing] });
  deepStrictEqual(p.map((x) => x.code), ["rule"]);
  ok(p[0].message.includes("engine bug"));
});

Deno.test("parseStudyText reports a defect of an engine's schema as an internal problem instead of throwing", () => {
  const broken: Engine<unknown> = {
    ...TOY_ENGINE,
    id: "broken",
    paramsSchema: z.lazy(() => {
      throw new Error("schema defect");
    }) as z.ZodType<unknown>,
  };
  const text = toyStudy().replace("engine: toy-engine", "engine: broken");
  const p = problems(text, { engines: [broken] });
  deepStrictEqual(p.map((x) => [x.code, x.line]), [["internal", 0]]);
  ok(p[0].message.includes("schema defect"));
});

Deno.test("parseStudyText never throws, whatever prefix of a study file it gets", () => {
  const full = toyStudy(
    "sweep:\n  grid: { count: [8, 10] }\n  zip:\n    - { polarity: [0, 0.5], label: [a, b] }\n" +
      "realisations: 3\nobservables:\n  record: [msd]\n  classification: { stickyFrames: 2 }\n",
  );
  ok(parseStudyText(full, "t.yaml", { engines }).ok);
  for (let n = 0; n < full.length; n++) {
    const r = parseStudyText(full.slice(0, n), "t.yaml", { engines });
    if (!r.ok) {
      ok(r.problems.length > 0);
      for (const p of r.problems) ok(p.line >= 1 && p.column >= 1 && p.message.length > 0, JSON.stringify(p));
    }
  }
});

Deno.test("parseStudyText never throws when characters of a study are replaced by YAML punctuation", () => {
  const full = toyStudy("sweep:\n  grid: { count: [8, 10] }\n");
  const chars = [":", "[", "{", "-", "&", "*", "!", "'", "\t", "%", "@"];
  for (let n = 0; n < full.length; n++) {
    for (const ch of [chars[n % chars.length], chars[(3 * n + 1) % chars.length]]) {
      const r = parseStudyText(full.slice(0, n) + ch + full.slice(n + 1), "t.yaml", { engines });
      ok(r.ok || r.problems.length > 0);
    }
  }
});

Deno.test("parseStudyText refuses lists and maps nested deeper than 64 levels with a location, not a crash", () => {
  const flow = parseStudyText(`name: x\nparameters: ${"[".repeat(10_000)}${"]".repeat(10_000)}\n`, "f.yaml", {
    engines,
  });
  ok(!flow.ok);
  deepStrictEqual([flow.problems.length, flow.problems[0].line, flow.problems[0].column], [1, 2, 77]);
  ok(flow.problems[0].message.includes("nested more than 64 levels"), flow.problems[0].message);
  let block = "name: x\nparameters:\n";
  for (let i = 0; i < 300; i++) block += `${"  ".repeat(i + 1)}k${i}:\n`;
  block += `${"  ".repeat(301)}v: 1\n`;
  const deep = parseStudyText(block, "b.yaml", { engines });
  ok(!deep.ok);
  ok(deep.problems[0].message.includes("nested more than 64 levels"), deep.problems[0].message);
  ok(!deep.problems[0].message.includes("stack"), deep.problems[0].message);
});

Deno.test("loadStudy reports unreadable files as problems", async () => {
  const dir = await Deno.makeTempDir();
  try {
    const missing = await loadStudy(`${dir}/nope.yaml`, { engines });
    ok(!missing.ok);
    equal(
      formatProblems(missing.problems),
      `${dir}/nope.yaml  (whole file): cannot read the study file: there is no such file`,
    );
    const folder = await loadStudy(dir, { engines });
    ok(!folder.ok);
    equal(folder.problems[0].code, "file-unreadable");
    // "name: café" saved as Latin-1 on line 2 (é = 0xE9, not UTF-8; RFC 3629 §4).
    const latin1Bytes = new TextEncoder().encode("# study\nname: caf?\n");
    latin1Bytes[latin1Bytes.indexOf(0x3f)] = 0xe9;
    await Deno.writeFile(`${dir}/latin1.yaml`, latin1Bytes);
    const latin1 = await loadStudy(`${dir}/latin1.yaml`, { engines });
    ok(!latin1.ok);
    const p = latin1.problems[0];
    deepStrictEqual([p.code, p.line, p.column], ["not-utf8", 2, 10]);
    ok(
      p.message.includes("byte 0xE9") && p.message.includes("save the file with the encoding UTF-8"),
      p.message,
    );
    // A valid multi-byte character before the bad byte counts as one column.
    await Deno.writeFile(
      `${dir}/mixed.yaml`,
      new Uint8Array([...new TextEncoder().encode("name: ∂x "), 0xff, 0x0a]),
    );
    const mixed = await loadStudy(`${dir}/mixed.yaml`, { engines });
    ok(!mixed.ok);
    deepStrictEqual([mixed.problems[0].line, mixed.problems[0].column], [1, 10]);
    await Deno.writeTextFile(`${dir}/good.yaml`, toyStudy());
    ok((await loadStudy(`${dir}/good.yaml`, { engines })).ok);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

// Earlier spellings of renamed engine parameters are accepted with a warning and normalized as the new spelling.
const filamentStudy = (parameters: string, sweep = "") =>
  `name: renamed
engine: vortex-filament-3d
parameters:
  units: dimensionless
  coreRadius: 1.0e-4
  resolution: 0.1
${parameters}
${sweep}realisations: 2
seed: 1
run: { duration: 0.01, sampleInterval: 0.01 }
`;

const OLD = filamentStudy(`  initial: { kind: ring-cloud, count: 3, radius: 0.5, cloudRadius: 2 }
  normalFluid:
    kind: uniform
    velocity: [0, 0, 0.5]
  friction: { kind: coefficients, alpha: 0.1, alphaPrime: 0 }`);
const NEW = filamentStudy(`  initial: { kind: ring-ball, count: 3, radius: 0.5, cloudRadius: 2 }
  normalVelocity: [0, 0, 0.5]
  friction: { kind: coefficients, alpha: 0.1, alphaPrime: 0 }`);

Deno.test("parseStudyText: earlier filament spellings load, warn at the old spelling, and hash like the new ones", () => {
  const old = parseStudyText(OLD, "old.yaml");
  const now = parseStudyText(NEW, "new.yaml");
  ok(old.ok && now.ok, JSON.stringify(old));
  equal(now.warnings.length, 0);
  deepStrictEqual(
    formatProblems(old.warnings).split("\n"),
    [
      'old.yaml:7:20  parameters.initial.kind: got ring-cloud; "ring-cloud" is the earlier name of "ring-ball" ' +
      "(accepted until the next release): write kind: ring-ball",
      "old.yaml:8:3  parameters.normalFluid: normalFluid is replaced by normalVelocity and heater (accepted " +
      "until the next release): write normalVelocity: [vx, vy, vz]",
    ],
  );
  const a = normalizeStudy(old.study, { text: OLD, sourcePath: "old.yaml" });
  const b = normalizeStudy(now.study, { text: NEW, sourcePath: "new.yaml" });
  equal(a.hash, b.hash);
  deepStrictEqual(a.points, b.points);
});

Deno.test("parseStudyText: an earlier spelling inside a swept value is rewritten there, with a warning", () => {
  const text = filamentStudy(
    "  initial: { kind: ring, radius: 1 }",
    "sweep:\n  grid:\n    initial:\n      - { kind: ring, radius: 1 }\n" +
      "      - { kind: colliding-rings, radius: 1, separation: 2 }\n",
  );
  const r = parseStudyText(text, "s.yaml");
  ok(r.ok, JSON.stringify(r));
  equal(r.warnings.length, 1);
  match(
    formatProblems(r.warnings),
    /^s\.yaml:12:9 {2}sweep\.grid\.initial\[1\]: .*"colliding-rings" is the earlier name/,
  );
  const s = normalizeStudy(r.study, { text, sourcePath: "s.yaml" });
  equal((s.points[1].params as { initial: { kind: string } }).initial.kind, "ring-pair");
});

Deno.test("parseStudyText: a swept section whose rename changes its path is refused with what to do", () => {
  const text = filamentStudy(
    "  initial: { kind: ring, radius: 1 }",
    "sweep:\n  grid:\n    normalFluid: [{ kind: rest }, { kind: uniform, velocity: [0, 0, 1] }]\n",
  );
  const r = parseStudyText(text, "s.yaml");
  ok(!r.ok);
  match(
    formatProblems(r.problems),
    /sweep\.grid\.normalFluid: uses an earlier spelling that cannot be swept/,
  );
});

Deno.test("parseStudyText: seed may be left out for an engine that draws no random numbers, not otherwise", () => {
  const imported = `name: tracks
engine: imported-tracks-2d
parameters:
  source: { files: "r{index}.csv" }
realisations: 2
run: { duration: 1, sampleInterval: 0.1 }
`;
  const r = parseStudyText(imported, "i.yaml");
  ok(r.ok, JSON.stringify(r));
  equal(r.study.seed, 0);
  const noSeed = filamentStudy("  initial: { kind: ring, radius: 1 }").replace("seed: 1\n", "");
  const f = parseStudyText(noSeed, "f.yaml");
  ok(!f.ok);
  match(formatProblems(f.problems), /seed: required/);
});
