import assert from "node:assert/strict";
import { aggregateOf, type FixtureStudy, syntheticStudy, tinyStudy } from "./_fixture.ts";
import { compileChart } from "./render.ts";
import { buildCharts, type ChartSpec, pointView } from "./specs.ts";

// deno-lint-ignore no-explicit-any
type Json = any;

function rowsOf(chart: ChartSpec): Json[] {
  return (chart.spec as Json).data.values;
}

Deno.test("buildCharts makes the four charts in page order, each compiling without Vega-Lite warnings", () => {
  const charts = buildCharts(aggregateOf(syntheticStudy()), { units: { length: "ℓ", time: "ℓ²/κ" } });
  assert.deepEqual(charts.map((c) => c.id), [
    "msd",
    "cluster-rms-radius",
    "evaporated-count",
    "invariant-drift",
  ]);
  for (const c of charts) {
    assert.ok(c.spec !== null, `${c.id} has data`);
    assert.equal((c.spec as Json).$schema, "https://vega.github.io/schema/vega-lite/v6.json");
    const { vega, warnings } = compileChart(c.spec!);
    assert.deepEqual(warnings, [], `${c.id} compiles cleanly`);
    assert.ok(Array.isArray(vega.marks) && vega.marks.length > 0, `${c.id} has marks`);
  }
  assert.equal((charts[0].spec as Json).encoding.x.title, "time t [ℓ²/κ]");
});

Deno.test("buildCharts: MSD rows equal the aggregate means, t = 0 is dropped on the log axis and said so", () => {
  const agg = aggregateOf(syntheticStudy({ frames: 41 }));
  const msd = buildCharts(agg)[0];
  const rows = rowsOf(msd);
  // 41 frames per point, the t = 0 frame of each of the 2 points cannot be drawn on a log axis.
  assert.equal(rows.length, 2 * 40);
  assert.match(msd.caption, /dropped: 2 mean values \(e\.g\. at t = 0\)/);
  const band = agg.points[1].series.get("msd")!;
  const row = rows.find((r: Json) => r.point === "initial count = 64" && r.t === band.t[10]);
  assert.equal(row.mean, band.mean[10]);
  assert.equal(row.lower, band.lower[10]);
  assert.equal(row.upper, band.upper[10]);
  assert.equal(row.n, 3);
  // Every point appears in the colour domain by its readable name, in point order, with its fixed colour, and
  // all charts share it.
  const scales = buildCharts(agg).map((c) => JSON.stringify((c.spec as Json).encoding.color.scale));
  assert.equal(new Set(scales).size, 1);
  assert.deepEqual(JSON.parse(scales[0]), {
    domain: ["initial count = 32", "initial count = 64"],
    range: ["#4c78a8", "#f58518"],
  });
});

Deno.test("buildCharts: a band whose lower end is ≤ 0 is cut on the log axis, n = 1 has no band", () => {
  const charts = buildCharts(aggregateOf(tinyStudy()));
  const msd = charts[0];
  const rows = rowsOf(msd);
  // Point a: k = 1 (1,2,3) and k = 2 (4,5,9) have lower ends 2 − 2.48 and 6 − 6.57, both < 0 → band cut.
  const a = rows.filter((r: Json) => r.point === "n = 1");
  assert.deepEqual(a.map((r: Json) => [r.t, r.mean, r.lower, r.upper]), [[0.5, 2, null, null], [
    1,
    6,
    null,
    null,
  ]]);
  // Point b: one realisation → mean only; frame 2 has no value at all → no row.
  const b = rows.filter((r: Json) => r.point === "n = 2");
  assert.deepEqual(b.map((r: Json) => [r.t, r.mean, r.lower]), [[0.5, 7, null]]);
  assert.match(msd.caption, /2 mean values \(e\.g\. at t = 0\) and the band at 2 times/);
  assert.match(msd.caption, /1 point has one done realisation/);
});

Deno.test("buildCharts: a series nobody recorded gives an empty chart with the reason", () => {
  const charts = buildCharts(aggregateOf(tinyStudy()));
  const rms = charts.find((c) => c.id === "cluster-rms-radius")!;
  assert.equal(rms.spec, null);
  assert.equal(rms.emptyReason, "No done realisation recorded the series 'cluster_rms_radius'.");
});

Deno.test("buildCharts: drift strip plot uses |drift|, drops exact zeros and says how many", () => {
  const agg = aggregateOf(syntheticStudy());
  const drift = buildCharts(agg)[3];
  const rows = rowsOf(drift);
  // 2 points × 3 done realisations × 3 invariants = 18 values; drift.impulse is exactly 0 for realisation 0.
  assert.equal(rows.length, 16);
  assert.match(drift.caption, /2 of 18 drift values are exactly 0 or not finite/);
  const neg = rows.find((r: Json) => r.invariant === "impulse" && r.realisation === 1);
  assert.equal(neg.signed, -6e-12);
  assert.equal(neg.drift, 6e-12);
  assert.equal((drift.spec as Json).encoding.x.scale.type, "log");
});

Deno.test("buildCharts thins long series evenly and keeps the last frame", () => {
  const agg = aggregateOf(syntheticStudy({ frames: 1201 }));
  const [msd, rms] = buildCharts(agg, { maxPointsPerSeries: 100 });
  const label = pointView(agg).names[0];
  const logRows = rowsOf(msd).filter((r: Json) => r.point === label);
  const linRows = rowsOf(rms).filter((r: Json) => r.point === label);
  // At most max (+ the last frame); fewer when early frames are farther apart in ln t than the target step.
  assert.ok(logRows.length <= 101 && logRows.length >= 50, `log thinning kept ${logRows.length}`);
  assert.equal(linRows.length, 100);
  assert.equal(linRows[linRows.length - 1].t, 600);
  assert.equal(logRows[logRows.length - 1].t, 600);
  // Log thinning is even in ln t: each kept frame is the first one at least the ratio q = (600/0.5)^(1/99) past
  // the previous kept frame, so the frame just before it (t − Δt, Δt = 0.5) is still below that ratio.
  const q = (600 / 0.5) ** (1 / 99);
  for (let i = 1; i < logRows.length - 1; i++) {
    const prev = logRows[i - 1].t;
    assert.ok(logRows[i].t / prev >= q * (1 - 1e-9), `t ${prev} → ${logRows[i].t} is a smaller step than q`);
    assert.ok((logRows[i].t - 0.5) / prev < q, `t ${prev} → ${logRows[i].t} skipped a frame it should keep`);
  }
  assert.match(msd.caption, /thinned to at most 100 frames/);
});

Deno.test("buildCharts numbers points with the same name so colours stay distinct", () => {
  const s = syntheticStudy();
  const dup: FixtureStudy = { ...s, points: s.points.map((p) => ({ ...p, label: "same", varied: {} })) };
  const [msd] = buildCharts(aggregateOf(dup));
  assert.deepEqual((msd.spec as Json).encoding.color.scale.domain, ["same (#0)", "same (#1)"]);
});

Deno.test("buildCharts: the count band stops at zero; physical units get SI prefixes on the axes", () => {
  const agg = aggregateOf(syntheticStudy());
  const evap = buildCharts(agg).find((c) => c.id === "evaporated-count")!;
  assert.ok(rowsOf(evap).every((r: Json) => r.lower === null || r.lower >= 0), "no negative count");
  assert.match(evap.caption, /cut at zero/);
  const [msd, rms] = buildCharts(agg, { units: { length: "m", time: "s" }, kappa: 9.9693e-8 });
  // The fixture's times run to 20 (s here) and radii of order 1 (m): no prefix needed, titles carry the unit.
  assert.equal((rms.spec as Json).encoding.x.title, "time t [s]");
  assert.match((msd.spec as Json).layer[1].encoding.y.title, /\[m²\]$/);
});
