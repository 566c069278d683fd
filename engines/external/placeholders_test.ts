import { assertEquals, assertThrows } from "../../test/_assert.ts";
import {
  parameterAt,
  PlaceholderError,
  placeholderNames,
  type PlaceholderValues,
  renderTemplate,
  templateProblems,
  valueText,
} from "./placeholders.ts";

// The placeholder syntax is spindrift's own format (documented in placeholders.ts); common practice, no source.

const run = { duration: 20, sampleInterval: 0.1, tolerance: 1e-9, maxDistance: 1e6 };
const parameters = {
  D: 0.25,
  n: 20,
  name: "film A",
  flag: true,
  grid: { nx: 64 },
  list: [1, 2.5],
  none: null,
};
const values: PlaceholderValues = {
  seed: "18446744073709551615",
  seed32: "4294967295",
  index: 6,
  run,
  parameters,
  output: "/w/r6/out.csv",
  workdir: "/w/r6",
  studydir: "/s",
};

Deno.test("renderTemplate fills every placeholder kind", () => {
  assertEquals(
    renderTemplate("{seed} {seed32} {index} {number} {output} {workdir} {studydir}", values),
    "18446744073709551615 4294967295 6 7 /w/r6/out.csv /w/r6 /s",
  );
  assertEquals(
    renderTemplate("{run.duration} {run.sampleInterval} {run.tolerance} {run.maxDistance}", values),
    "20 0.1 1e-9 1000000",
  );
  assertEquals(
    renderTemplate("{param.D} {param.n} {param.name} {param.flag} {param.grid.nx} {param.list.1}", values),
    "0.25 20 film A true 64 2.5",
  );
});

Deno.test("renderTemplate pads {index} and {number} with zeros to the given width", () => {
  assertEquals(renderTemplate("r{index:3}-{number:3}", values), "r006-007");
  assertEquals(renderTemplate("{index:1}", { ...values, index: 1234 }), "1234");
});

Deno.test("renderTemplate writes lists, maps and null as JSON", () => {
  assertEquals(renderTemplate("{param.list} {param.grid} {param.none}", values), '[1,2.5] {"nx":64} null');
});

Deno.test("renderTemplate keeps braces that are not placeholders, so JSON and namelist templates need no escaping", () => {
  const json = '{"sigma0": {param.D}, "nested": {"a": {"b": 1}}, "x": {x}}';
  assertEquals(renderTemplate(json, values), '{"sigma0": 0.25, "nested": {"a": {"b": 1}}, "x": {x}}');
  assertEquals(renderTemplate("&run n = {param.n} /\n${HOME} {}", values), "&run n = 20 /\n${HOME} {}");
});

Deno.test("renderTemplate passes each value through the quote function (shell mode)", () => {
  const q = (v: string) => `<${v}>`;
  assertEquals(renderTemplate("run --n {param.n} {param.name}", values, q), "run --n <20> <film A>");
});

Deno.test("renderTemplate refuses unknown run controls, missing parameters and likely typos", () => {
  assertThrows(() => renderTemplate("{run.steps}", values), PlaceholderError, "unknown run control 'steps'");
  assertThrows(() => renderTemplate("{param.E}", values), PlaceholderError, "parameters.E is not set");
  assertThrows(() => renderTemplate("{param.grid.ny}", values), PlaceholderError, "parameters.grid.ny");
  assertThrows(() => renderTemplate("{Seed}", values), PlaceholderError, "did you mean {seed}?");
  assertThrows(() => renderTemplate("{indx}", values), PlaceholderError, "did you mean {index}?");
  assertThrows(() => renderTemplate("{params.D}", values), PlaceholderError, "did you mean {param.D}?");
  assertThrows(
    () => renderTemplate("{Run.duration}", values),
    PlaceholderError,
    "did you mean {run.duration}?",
  );
  assertThrows(() => renderTemplate("{seed:3}", values), PlaceholderError, "applies to {index} and {number}");
});

Deno.test("renderTemplate refuses path placeholders while file names are rendered", () => {
  const names: PlaceholderValues = { seed: "1", seed32: "0", index: 0, run, parameters };
  assertEquals(renderTemplate("out-{index}-{param.n}.csv", names), "out-0-20.csv");
  assertThrows(() => renderTemplate("{workdir}/x.csv", names), PlaceholderError, "{workdir} is a path");
});

Deno.test("templateProblems lists every problem of a text at once", () => {
  const problems = templateProblems("{param.E} {run.x} {sed} {seed} {output}", "full", parameters);
  assertEquals(problems.length, 3);
  assertEquals(templateProblems("{output}", "name", parameters).length, 1);
  assertEquals(templateProblems("plain {text}", "full", parameters), []);
  assertEquals(templateProblems("{param}", "full", parameters), []);
  assertEquals(templateProblems("{param.}", "full", parameters).length, 1);
});

Deno.test("placeholderNames finds placeholders and likely typos, not other brace words", () => {
  assertEquals(placeholderNames("./sim-{param.v} {x} {Index} {seed}"), ["param.v", "Index", "seed"]);
  assertEquals(placeholderNames("/opt/sim/bin/run"), []);
});

Deno.test("parameterAt follows maps and list positions, and misses cleanly", () => {
  assertEquals(parameterAt(parameters, "grid.nx"), 64);
  assertEquals(parameterAt(parameters, "list.0"), 1);
  assertEquals(parameterAt(parameters, "list.x"), undefined);
  assertEquals(parameterAt(parameters, "D.x"), undefined);
  assertEquals(parameterAt(parameters, "toString"), undefined);
});

Deno.test("valueText writes numbers in their shortest round-trip form", () => {
  // ECMAScript Number::toString gives the shortest digits that read back to the same double (ECMA-262 §6.1.6.1.20).
  for (const v of [0.1, 1 / 3, 1e-7, 6.02214076e23, 2 ** 53 + 2]) assertEquals(Number(valueText(v)), v);
  assertEquals(valueText(1e-7), "1e-7");
  // −0 is written "0": content hashes treat −0 and 0 as one parameter point (study/hash.ts), so the program
  // must receive the same text for both.
  assertEquals(valueText(-0), "0");
  assertEquals(valueText("a b"), "a b");
});
