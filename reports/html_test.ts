import assert from "node:assert/strict";
import type { StudyAggregate } from "./aggregate.ts";
import { aggregateOf, syntheticStudy, tinyStudy } from "./_fixture.ts";
import {
  escapeHtml,
  formatInterval,
  formatNumber,
  inlineScriptSource,
  jsonForScript,
  type RenderedChart,
  renderReportHtml,
} from "./html.ts";
import { meanInterval } from "./intervals.ts";
import { compileChart } from "./render.ts";
import { buildCharts } from "./specs.ts";

function page(agg: StudyAggregate, runtime = "/* vega runtime stand-in */"): string {
  const charts: RenderedChart[] = buildCharts(agg).map((chart) => ({
    chart,
    vega: chart.spec === null ? null : compileChart(chart.spec).vega,
  }));
  return renderReportHtml({
    agg,
    charts,
    vegaRuntime: runtime,
    dbPath: "/data/film.sqlite",
    generatedAt: "2026-02-01T00:00:00.000Z",
    svgDirName: "film-report-svg",
  });
}

function count(haystack: string, needle: RegExp): number {
  return [...haystack.matchAll(needle)].length;
}

Deno.test("escapeHtml escapes the five HTML-special characters", () => {
  assert.equal(
    escapeHtml(`<a href="x" title='y'>&</a>`),
    "&lt;a href=&quot;x&quot; title=&#39;y&#39;&gt;&amp;&lt;/a&gt;",
  );
  assert.equal(escapeHtml("plain ℓ²/κ"), "plain ℓ²/κ");
});

Deno.test("jsonForScript round-trips and cannot close a script element", () => {
  const value = {
    label: "</script><script>alert(1)</script>",
    s: "<!-- & \u2028 \u2029 >",
    n: [1.5, -2e-300],
  };
  const text = jsonForScript(value);
  assert.ok(!/[<>&\u2028\u2029]/.test(text), text);
  assert.deepEqual(JSON.parse(text), value);
});

Deno.test("inlineScriptSource neutralises </script and <!-- without changing what the code means", () => {
  const src = `var a = "x</script>y<!--z", b = '</SCRIPT>'; return a + b + /<\\/script>/.test("</script>");`;
  const safe = inlineScriptSource(src);
  assert.ok(!/<\/script/i.test(safe) && !safe.includes("<!--"), safe);
  // Same result as the original when evaluated (common practice, no source: \/ ≡ / and \x3C ≡ < in JS strings).
  assert.equal(new Function(safe)(), new Function(src)());
  assert.equal(new Function(safe)(), "x</script>y<!--z</SCRIPT>true");
});

Deno.test("renderReportHtml: hostile study text, labels and errors are escaped, never markup", () => {
  const html = page(aggregateOf(syntheticStudy({ hostile: true })));
  // Only the page's own four script elements exist: error hook, chart JSON, Vega runtime, boot.
  assert.equal(count(html, /<script/gi), 4);
  assert.equal(count(html, /<\/script/gi), 4);
  assert.ok(!html.includes("<img"), "no injected <img>");
  assert.ok(!html.includes("<b>bold"), "no injected <b>");
  assert.ok(!html.includes('onerror="'), "no live onerror attribute");
  // The text is there, escaped, in the title, heading, description, labels, failure message and study file.
  const escapedScript = "&lt;script&gt;document.body.dataset.pwned=&#39;1&#39;&lt;/script&gt;";
  assert.match(html, new RegExp(`<title>film-patch${escapedScript} — spindrift report</title>`));
  assert.match(html, new RegExp(`<h1>film-patch${escapedScript}</h1>`));
  assert.ok(html.includes("&lt;/pre&gt;&lt;/script&gt;&lt;!--"), "description closing tags escaped");
  assert.ok(
    html.includes("<td>initial.count=64 &lt;/script&gt;&lt;b&gt;bold&lt;/b&gt;</td>"),
    "point label escaped",
  );
  assert.ok(html.includes(`NaN at t=3.5 ${escapedScript}`), "failure message escaped");
  // Chart data carries point names and the failure text only as JSON with \u003c escapes.
  assert.ok(!/<\/script><b>/.test(html.slice(html.indexOf('id="spindrift-specs"'))), "chart JSON escaped");
});

Deno.test("renderReportHtml: the page has every chart, the parameters, failures, study text and provenance", () => {
  const agg = aggregateOf(syntheticStudy());
  const html = page(agg);
  assert.match(html, /^<!doctype html>/);
  assert.match(html, /<body data-charts="4" data-rendered="0" data-errors="0" data-state="loading">/);
  const specs = JSON.parse(
    /<script type="application\/json" id="spindrift-specs">(.*?)<\/script>/s.exec(html)![1],
  );
  assert.deepEqual(specs.map((s: { id: string }) => s.id), [
    "msd",
    "cluster-rms-radius",
    "evaporated-count",
    "invariant-drift",
  ]);
  for (const id of ["msd", "cluster-rms-radius", "evaporated-count", "invariant-drift"]) {
    assert.ok(html.includes(`<figure class="chart" id="chart-${id}">`), `figure ${id}`);
    assert.ok(html.includes(`<div class="view" id="view-${id}"></div>`), `container ${id}`);
    assert.ok(html.includes(`href="film-report-svg/${id}.svg"`), `SVG link ${id}`);
  }
  for (
    const text of [
      "How fast does a localised cloud", // the question
      '<th scope="row">run.sampleInterval</th><td>0.5</td>', // run controls
      '<th scope="row">master seed</th><td>20260115</td>',
      '<th scope="row">initial.count</th><td class="note">varies — see parameter points</td>',
      "<td>initial.count=64</td><td>initial.count = 64</td>", // point with its swept value
      "position became NaN at t = 3.5 (vortex 17)", // failure
      "still running, or interrupted by a crash", // unfinished realisation
      '<pre class="study-text">name: film-patch\n', // full study text
      "<code>spindrift 0.1.0</code>",
      "<code>2.9.6</code>",
      "<code>0123456789abcdef0123456789abcdef01234567</code>",
      "<code>point-vortex-2d 1.0.0</code>",
      "<code>2026-01-15T10:00:00.000Z</code>",
      "<code>/data/film.sqlite</code>",
    ]
  ) assert.ok(html.includes(text), `page shows ${JSON.stringify(text)}`);
});

Deno.test("renderReportHtml: a chart without data shows its reason and is not counted as a view", () => {
  const html = page(aggregateOf(tinyStudy()));
  assert.match(html, /data-charts="3"/);
  // One line instead of an empty box: the chart's title and why there is nothing to draw.
  assert.ok(html.includes(
    `<p class="note not-applicable" id="view-cluster-rms-radius"><strong>RMS radius of the main cluster:</strong> ` +
      `No done realisation recorded the series &#39;cluster_rms_radius&#39;.</p>`,
  ));
  assert.ok(!html.includes(`href="film-report-svg/cluster-rms-radius.svg"`));
});

Deno.test("formatNumber and formatInterval print four significant digits and say when there is no interval", () => {
  assert.equal(formatNumber(0), "0");
  assert.equal(formatNumber(3.14159265), "3.142");
  assert.equal(formatNumber(12345.678), "12350");
  assert.equal(formatNumber(123456.7), "1.235e+5");
  assert.equal(formatNumber(2e-10), "2e-10");
  assert.equal(formatNumber(-1.2345e-7), "-1.235e-7");
  assert.equal(formatNumber(Number.NaN), "NaN");
  assert.equal(formatInterval(meanInterval([1, 2, 3])), "2 [-0.4841, 4.484] (n = 3)");
  assert.equal(formatInterval(meanInterval([7])), "7 (n = 1, no interval)");
  assert.equal(formatInterval(meanInterval([])), "— (n = 0)");
});
