import { deepStrictEqual, equal } from "node:assert/strict";
import { LineCounter, parseDocument } from "yaml";
import {
  editDistance,
  formatPath,
  formatProblems,
  sortProblems,
  type StudyProblem,
  suggest,
  YamlLocator,
} from "./problems.ts";

Deno.test("formatProblems prints file:line:column, path, the value as written and the rule", () => {
  const problems: StudyProblem[] = [
    {
      file: "film.yaml",
      line: 12,
      column: 10,
      path: "parameters.initial.count",
      value: "-4",
      message: "must be an integer ≥ 1",
      code: "out-of-range",
    },
    {
      file: "film.yaml",
      line: 3,
      column: 1,
      path: "paramters",
      message: 'unknown key; did you mean "parameters"?',
      code: "unknown-key",
    },
    {
      file: "gone.yaml",
      line: 0,
      column: 0,
      path: "",
      message: "cannot read the study file: there is no such file",
      code: "file-unreadable",
    },
  ];
  equal(
    formatProblems(problems),
    [
      "film.yaml:12:10  parameters.initial.count: got -4; must be an integer ≥ 1",
      'film.yaml:3:1  paramters: unknown key; did you mean "parameters"?',
      "gone.yaml  (whole file): cannot read the study file: there is no such file",
    ].join("\n"),
  );
  equal(formatProblems([]), "");
  deepStrictEqual(sortProblems(problems).map((p) => p.line), [0, 3, 12]);
});

Deno.test("formatPath joins plain keys with dots and brackets the rest", () => {
  equal(formatPath(["run", "duration"]), "run.duration");
  equal(formatPath(["sweep", "grid", "initial.count", 2]), 'sweep.grid["initial.count"][2]');
  equal(formatPath(["sweep", "zip", 0, "a"]), "sweep.zip[0].a");
  equal(formatPath([]), "");
});

// Levenshtein's classic example kitten → sitting needs 3 edits (Wagner & Fischer, J. ACM 21, 168 (1974),
// doi:10.1145/321796.321811, is the standard algorithm); optimal string alignment counts a swap of neighbours
// as one edit (Damerau 1964), and cannot edit a substring twice, so "ca" → "abc" costs 3 (unrestricted
// Damerau–Levenshtein gives 2); both values are standard textbook examples, quoted from memory.
Deno.test("editDistance counts insertions, deletions, substitutions and adjacent swaps", () => {
  equal(editDistance("kitten", "sitting"), 3);
  equal(editDistance("", "abc"), 3);
  equal(editDistance("abc", "abc"), 0);
  equal(editDistance("paramters", "parameters"), 1);
  equal(editDistance("intial", "initial"), 1);
  equal(editDistance("seperationFactor", "separationFactor"), 1);
  equal(editDistance("ab", "ba"), 1);
  equal(editDistance("ca", "abc"), 3);
});

Deno.test("suggest proposes a close key, ignoring case, and nothing for far-off words", () => {
  const keys = [
    "name",
    "description",
    "engine",
    "parameters",
    "sweep",
    "realisations",
    "seed",
    "run",
    "observables",
  ];
  equal(suggest("paramters", keys), "parameters");
  equal(suggest("realizations", keys), "realisations");
  equal(suggest("Seed", keys), "seed");
  equal(suggest("rnu", keys), "run");
  equal(suggest("xyz", keys), undefined);
  equal(suggest("temperature", keys), undefined);
  equal(suggest("a", ["b"]), undefined);
});

function locator(text: string) {
  const lc = new LineCounter();
  const doc = parseDocument(text, { lineCounter: lc });
  return new YamlLocator(text, doc, lc);
}

const TEXT = `name: x
run:
  duration: -4
  empty:
list:
  - a
  - { k: [1, 2] }
block: |
  line one
  line two
nested:
  a: 1
`;

Deno.test("YamlLocator.locate gives 1-based line and column of values and keys", () => {
  const l = locator(TEXT);
  deepStrictEqual(l.locate(["run", "duration"]), { line: 3, column: 13, exact: true, value: "-4" });
  deepStrictEqual(l.locate(["run", "duration"], { key: true }), {
    line: 3,
    column: 3,
    exact: true,
    value: "-4",
  });
  deepStrictEqual(l.locate(["list", 1, "k", 1]), { line: 7, column: 14, exact: true, value: "2" });
  deepStrictEqual(l.locate(["list", 1, "k"]), { line: 7, column: 10, exact: true, value: "[1, 2]" });
});

Deno.test("YamlLocator.locate falls back to the nearest existing parent's key for missing paths", () => {
  const l = locator(TEXT);
  deepStrictEqual(l.locate(["run", "sampleInterval"]), { line: 2, column: 1, exact: false });
  deepStrictEqual(l.locate(["nested", "b", "c"]), { line: 11, column: 1, exact: false });
  deepStrictEqual(l.locate(["list", 5]), { line: 5, column: 1, exact: false });
  deepStrictEqual(l.locate(["absent"]), { line: 1, column: 1, exact: false });
});

Deno.test("YamlLocator shows empty values, block texts and block collections readably", () => {
  const l = locator(TEXT);
  equal(l.locate(["run", "empty"]).value, "nothing");
  equal(l.locate(["block"]).value, "line one …");
  equal(l.locate(["nested"]).value, "a map");
  equal(l.locate(["list"]).value, "a list of 2 items");
});
