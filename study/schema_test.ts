import { deepStrictEqual, equal, ok } from "node:assert/strict";
import { ENGINES } from "../engines/registry.ts";
import {
  observablesRules,
  observablesSchema,
  runRules,
  runSchema,
  studyJsonSchema,
  studySchema,
  studyShellSchema,
  sweepRules,
  sweepSchema,
} from "./schema.ts";

type Json = Record<string, unknown>;

Deno.test("studyJsonSchema is draft 2020-12 with one member per registered engine", () => {
  const json = studyJsonSchema();
  equal(json.$schema, "https://json-schema.org/draft/2020-12/schema");
  const members = json.oneOf as Json[];
  deepStrictEqual(
    members.map((m) => ((m.properties as Json).engine as Json).const),
    ENGINES.map((e) => e.id),
  );
  members.forEach((m, i) => {
    // seed is optional for engines whose realisations draw no random numbers (Engine.usesSeed: false).
    const seed = ENGINES[i].usesSeed === false ? [] : ["seed"];
    deepStrictEqual(m.required, ["name", "engine", "parameters", ...seed, "run"]);
    equal(m.additionalProperties, false);
  });
});

/** Every numeric field (number, integer, or list of numbers) under `node`, with its description. */
function numericFields(node: unknown, path: string, out: { path: string; description?: string }[]): void {
  if (Array.isArray(node)) return node.forEach((n, i) => numericFields(n, `${path}[${i}]`, out));
  if (typeof node !== "object" || node === null) return;
  const j = node as Json;
  for (const [k, v] of Object.entries((j.properties ?? {}) as Json)) {
    const p = v as Json;
    const numeric = (s: Json | undefined): boolean =>
      s !== undefined && (s.type === "number" || s.type === "integer" ||
        (s.type === "array" &&
          (numeric(s.items as Json) || ((s.prefixItems ?? []) as Json[]).some(numeric))));
    if (numeric(p)) out.push({ path: `${path}.${k}`, description: p.description as string | undefined });
  }
  for (const [k, v] of Object.entries(j)) numericFields(v, `${path}/${k}`, out);
}

// Issue requirement: every dimensional parameter documents its unit in the schema; dimensionless ones say so.
Deno.test("every numeric field of the study schema documents its unit or says it is dimensionless", () => {
  const fields: { path: string; description?: string }[] = [];
  numericFields(studyJsonSchema(), "", fields);
  ok(fields.length > 10);
  const unit = /unit|dimensionless|integer ≥|ℓ|κ|kelvin|radians/i;
  const bad = fields.filter((f) => !f.description || !unit.test(f.description));
  deepStrictEqual(
    bad.map((f) => f.path),
    [],
    "numeric fields whose .describe() names no unit (write the unit, e.g. 'in length units ℓ', or " +
      `'dimensionless'): ${JSON.stringify(bad, null, 1)}`,
  );
});

Deno.test("runSchema refuses non-positive durations and a sample interval beyond the duration", () => {
  ok(!runSchema.safeParse({ duration: 0, sampleInterval: 0.1 }).success);
  const r = runSchema.safeParse({ duration: 1, sampleInterval: 2 });
  ok(!r.success);
  deepStrictEqual(r.error.issues.map((i) => i.path), [["sampleInterval"]]);
  ok(runSchema.safeParse({ duration: 1, sampleInterval: 1 }).success);
});

Deno.test("runRules finds a long sample interval even when another run field is wrong", () => {
  deepStrictEqual(runRules({ duration: 1, sampleInterval: 2, workers: "x" }).map((r) => r.path), [[
    "sampleInterval",
  ]]);
  deepStrictEqual(runRules({ duration: -1, sampleInterval: 2 }), []);
  deepStrictEqual(runRules("nonsense"), []);
});

Deno.test("sweepRules finds unequal zip lists, repeats, paths swept twice and overlapping paths", () => {
  const found = sweepRules({
    grid: { "a.b": [1, 2, 1], c: [1] },
    zip: [{ "a.b": [1, 2], d: [1] }, { c: [1] }, { a: [1] }, { "e..f": [1] }],
  });
  deepStrictEqual(found.map((r) => r.path), [
    ["zip", 0, "d"],
    ["grid", "a.b", 2],
    ["zip", 0, "a.b"],
    ["zip", 1, "c"],
    ["zip", 2, "a"],
    ["zip", 3, "e..f"],
  ]);
  ok(found[0].message.includes("has 1 value but a.b has 2"));
  ok(found[3].message.includes("already swept in sweep.grid"));
  ok(found[4].message.includes("overlaps a.b"));
  deepStrictEqual(
    sweepRules({ zip: [{ a: [1, 2], b: [3, 3] }, { c: [{ k: 1, j: 2 }, { j: 2, k: 1 }] }] }).map((r) =>
      r.path
    ),
    [
      ["zip", 1, "c", 1],
    ],
  );
});

Deno.test("sweepSchema refuses empty value lists and empty zip groups", () => {
  ok(!sweepSchema.safeParse({ grid: { a: [] } }).success);
  ok(!sweepSchema.safeParse({ zip: [{}] }).success);
  ok(sweepSchema.safeParse({}).success);
});

Deno.test("observablesRules finds an observable listed twice", () => {
  deepStrictEqual(observablesRules({ record: ["msd", "cluster", "msd"] }).map((r) => r.path), [[
    "record",
    2,
  ]]);
});

Deno.test("observablesSchema fills profile defaults and refuses bad profile binning with its path", () => {
  const ok1 = observablesSchema.safeParse({ profile: { bins: 50 } });
  ok(ok1.success);
  deepStrictEqual(ok1.data.profile, { bins: 50, binFraction: 0.1 });
  equal(observablesSchema.parse({}).profile, undefined);
  const bad = observablesSchema.safeParse({ profile: { bins: 0, binFraction: -1, width: 2 } });
  ok(!bad.success);
  deepStrictEqual(
    bad.error.issues.map((i) => i.path.join(".")).sort(),
    ["profile", "profile.binFraction", "profile.bins"],
  );
});

Deno.test("studySchema and studyShellSchema accept a minimal point-vortex study", () => {
  const study = {
    name: "p",
    engine: "point-vortex-2d",
    parameters: { initial: { kind: "random-cloud", count: 8, radius: 1 } },
    seed: 1,
    run: { duration: 1, sampleInterval: 0.1 },
  };
  ok(studySchema.safeParse(study).success);
  const shell = studyShellSchema.parse(study);
  equal(shell.description, "");
  equal(shell.realisations, 1);
});
