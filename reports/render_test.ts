import assert from "node:assert/strict";
import type { TopLevelSpec } from "vega-lite";
import { checkWellFormedXml } from "./_testing.ts";
import { compileChart, readVegaRuntime, renderSvg } from "./render.ts";

const SPEC = {
  $schema: "https://vega.github.io/schema/vega-lite/v6.json",
  width: 200,
  height: 100,
  data: { values: [{ t: 1, v: 2 }, { t: 2, v: 3 }, { t: 3, v: 5 }] },
  mark: "line",
  encoding: {
    x: { field: "t", type: "quantitative", title: "time <t> & more" },
    y: { field: "v", type: "quantitative" },
  },
} as TopLevelSpec;

Deno.test("compileChart gives a Vega spec and returns Vega-Lite warnings instead of printing them", () => {
  const clean = compileChart(SPEC);
  assert.deepEqual(clean.warnings, []);
  assert.equal(clean.vega.width, 200);
  // A shape channel cannot encode a quantitative field: Vega-Lite warns about it.
  const odd = compileChart(
    {
      ...SPEC,
      mark: "point",
      encoding: { ...(SPEC as { encoding: object }).encoding, shape: { field: "v", type: "quantitative" } },
    } as unknown as TopLevelSpec,
  );
  assert.ok(odd.warnings.length >= 1, JSON.stringify(odd.warnings));
  assert.ok(odd.warnings.every((w) => /shape/.test(w)), JSON.stringify(odd.warnings));
});

Deno.test("renderSvg renders a compiled chart to well-formed SVG with escaped text", async () => {
  const svg = await renderSvg(compileChart(SPEC).vega);
  // Well-formed XML with an <svg> root (XML 1.0 §2.1; W3C SVG 1.1 §5.1).
  assert.equal(checkWellFormedXml(svg), "svg");
  assert.match(svg, /^<svg xmlns="http:\/\/www\.w3\.org\/2000\/svg"/);
  assert.ok(svg.includes("time &lt;t&gt; &amp; more"), "axis title is escaped in the SVG");
  assert.match(svg, /<path [^>]*d="M/, "the line is drawn");
});

Deno.test("readVegaRuntime returns the browser build of vega 6", async () => {
  const js = await readVegaRuntime();
  assert.ok(js.length > 300_000, `runtime is ${js.length} characters`);
  assert.match(js, /version\s*=?\s*:?\s*"6\.\d+\.\d+"|"6\.4\.0"/);
});
