import { deepStrictEqual, equal } from "node:assert/strict";
import { applySetting, countPoints, expandSweep, pointLabel, sweepAxes } from "./sweep.ts";

// Expected orders below follow the documented rule (cartesian product, first axis slowest, grid before zip),
// the order of nested loops written in file order (common practice, no source).
Deno.test("expandSweep gives the grid's cartesian product with the first path varying slowest", () => {
  const s = expandSweep({ grid: { a: [1, 2], b: ["x", "y", "z"] } });
  deepStrictEqual(s.map((p) => p.varied), [
    { a: 1, b: "x" },
    { a: 1, b: "y" },
    { a: 1, b: "z" },
    { a: 2, b: "x" },
    { a: 2, b: "y" },
    { a: 2, b: "z" },
  ]);
  deepStrictEqual(s[4].sources, { a: ["grid", "a", 1], b: ["grid", "b", 1] });
});

Deno.test("expandSweep varies the lists of a zip group together", () => {
  const s = expandSweep({ zip: [{ "f.alpha": [0, 0.1, 0.2], "f.alphaPrime": [0, 0.01, 0.02] }] });
  deepStrictEqual(s.map((p) => p.varied), [
    { "f.alpha": 0, "f.alphaPrime": 0 },
    { "f.alpha": 0.1, "f.alphaPrime": 0.01 },
    { "f.alpha": 0.2, "f.alphaPrime": 0.02 },
  ]);
  deepStrictEqual(s[2].sources, {
    "f.alpha": ["zip", 0, "f.alpha", 2],
    "f.alphaPrime": ["zip", 0, "f.alphaPrime", 2],
  });
});

Deno.test("expandSweep combines grid and zip groups as a product, grid first", () => {
  const s = expandSweep({ grid: { n: [8, 16] }, zip: [{ a: [0, 1], b: [2, 3] }, { c: ["u", "v"] }] });
  equal(s.length, 2 * 2 * 2);
  deepStrictEqual(s.map((p) => pointLabel(p.varied)), [
    "n=8, a=0, b=2, c=u",
    "n=8, a=0, b=2, c=v",
    "n=8, a=1, b=3, c=u",
    "n=8, a=1, b=3, c=v",
    "n=16, a=0, b=2, c=u",
    "n=16, a=0, b=2, c=v",
    "n=16, a=1, b=3, c=u",
    "n=16, a=1, b=3, c=v",
  ]);
  equal(countPoints({ grid: { n: [8, 16] }, zip: [{ a: [0, 1], b: [2, 3] }, { c: ["u", "v"] }] }), 8);
});

Deno.test("expandSweep without a sweep gives the single base setting", () => {
  deepStrictEqual(expandSweep(undefined), [{ varied: {}, sources: {} }]);
  deepStrictEqual(expandSweep({}), [{ varied: {}, sources: {} }]);
  equal(pointLabel({}), "base");
  equal(countPoints(undefined), 1);
});

Deno.test("sweepAxes lists grid paths then zip groups with their sites", () => {
  const axes = sweepAxes({ grid: { p: [1], q: [1, 2] }, zip: [{ r: [1, 2, 3], s: [4, 5, 6] }] });
  deepStrictEqual(axes.map((a) => [a.paths, a.length, a.sites]), [
    [["p"], 1, [["grid", "p"]]],
    [["q"], 2, [["grid", "q"]]],
    [["r", "s"], 3, [["zip", 0, "r"], ["zip", 0, "s"]]],
  ]);
});

Deno.test("applySetting replaces swept values, creates missing maps and leaves the base untouched", () => {
  const base = { initial: { count: 8, radius: 1 }, domain: "plane" };
  const out = applySetting(base, { "initial.count": 64, "friction.alpha": 0.1, domain: { kind: "disk" } });
  deepStrictEqual(out, {
    initial: { count: 64, radius: 1 },
    domain: { kind: "disk" },
    friction: { alpha: 0.1 },
  });
  deepStrictEqual(base, { initial: { count: 8, radius: 1 }, domain: "plane" });
});

Deno.test("applySetting copies swept map values, so points do not share objects", () => {
  const value = { kind: "disk", radius: 5 };
  const a = applySetting({}, { domain: value });
  (a.domain as Record<string, unknown>).radius = 7;
  equal(value.radius, 5);
});

Deno.test("pointLabel writes values in YAML flow style", () => {
  equal(pointLabel({ "initial.count": 64, "friction.alpha": 0.01 }), "initial.count=64, friction.alpha=0.01");
  equal(pointLabel({ domain: { kind: "disk", radius: 5 } }), "domain={kind: disk, radius: 5}");
  equal(
    pointLabel({ centre: [0, 1.5], flag: true, name: "a b", odd: "x,y" }),
    'centre=[0, 1.5], flag=true, name=a b, odd="x,y"',
  );
});
