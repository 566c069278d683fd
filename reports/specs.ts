/**
 * Vega-Lite (v6) chart specifications for a study report, built from a `StudyAggregate`. Each chart carries
 * its data inline (`data.values`), so a spec is self-contained and the page works offline.
 *
 * Charts (one colour per parameter point, the same colours in every chart):
 * - `msd`: ensemble mean-square displacement vs time, log–log, with the 95 % band;
 * - `cluster-rms-radius`: main-cluster RMS radius vs time with band;
 * - `evaporated-count`: cumulative evaporated objects vs time with band;
 * - `invariant-drift`: relative invariant drift of every realisation (strip plot, log axis).
 * The failure table is HTML (see `html.ts`).
 *
 * Log axes cannot show values ≤ 0: such values are dropped (the mean line and band break there) and the
 * caption says how many. Series longer than `maxPointsPerSeries` frames are thinned (evenly in frame index
 * on linear axes, evenly in log t on log axes, always keeping the last frame); the caption says so.
 *
 * @example
 * ```ts
 * const charts = buildCharts(aggregateStudy(db), { units: { length: "ℓ", time: "ℓ²/κ" } });
 * for (const c of charts) console.log(c.id, c.title, c.caption, c.spec ? "chart" : c.emptyReason);
 * ```
 */
import type { TopLevelSpec } from "vega-lite";
import type { SeriesBand, StudyAggregate } from "./aggregate.ts";

/** One chart of the report: its spec, or the reason it has nothing to show. */
export interface ChartSpec {
  /** Stable id: used for the page container (`view-<id>`) and the SVG file name (`<id>.svg`). */
  readonly id: string;
  readonly title: string;
  /** Plain text under the chart (HTML-escaped by the page). */
  readonly caption: string;
  /** Null when there is no data to plot. */
  readonly spec: TopLevelSpec | null;
  /** Why `spec` is null. */
  readonly emptyReason: string | null;
}

export interface ChartOptions {
  /** Unit labels shown on the axes; omitted → generic "length"/"time" wording. */
  readonly units?: { readonly length: string; readonly time: string };
  /** Most frames drawn per point and series (default 600). */
  readonly maxPointsPerSeries?: number;
  /** Plot width in pixels (default 640). */
  readonly width?: number;
}

/** Vega-Lite schema URL of every chart (shared with the analysis and compare charts). */
export const SCHEMA = "https://vega.github.io/schema/vega-lite/v6.json";

/** The series the charts draw (the aggregate can be limited to these). */
export const CHART_SERIES: readonly string[] = ["msd", "cluster_rms_radius", "evaporated_count"];

/** Shared look: readable sizes for slides and screens. */
export const CONFIG = {
  font: "system-ui, -apple-system, 'Segoe UI', Roboto, 'Helvetica Neue', Arial, sans-serif",
  axis: { labelFontSize: 12, titleFontSize: 13, titleFontWeight: 600, grid: true, gridColor: "#e6e6e6" },
  legend: { labelFontSize: 12, titleFontSize: 12, labelLimit: 420, orient: "bottom", direction: "vertical" },
  view: { stroke: "#cccccc" },
} as const;

/**
 * The report's charts, in page order.
 *
 * @example
 * ```ts
 * const [msd] = buildCharts(agg);
 * ```
 */
export function buildCharts(agg: StudyAggregate, opts: ChartOptions = {}): ChartSpec[] {
  const ctx = chartContext(agg, opts);
  const pct = `${Math.round(agg.level * 100)} %`;
  const lu = opts.units?.length;
  const tu = opts.units?.time;
  const timeTitle = tu ? `time t [${tu}]` : "time t";
  return [
    bandChart(ctx, {
      id: "msd",
      series: "msd",
      title: "Mean-square displacement of main-cluster objects",
      yTitle: lu ? `MSD ⟨|Δr|²⟩ [${lu}²]` : "MSD ⟨|Δr|²⟩ (length²)",
      timeTitle,
      log: true,
      about:
        `Ensemble mean over done realisations of the mean-square displacement from t = 0 of objects in ` +
        `the main cluster at both ends (cluster-centre drift removed); shaded: ${pct} Student-t confidence ` +
        `band of the mean (no band where n < 2). Log–log axes.`,
    }),
    bandChart(ctx, {
      id: "cluster-rms-radius",
      series: "cluster_rms_radius",
      title: "RMS radius of the main cluster",
      yTitle: lu ? `R_rms [${lu}]` : "R_rms (length)",
      timeTitle,
      log: false,
      about: `Ensemble mean of the main cluster's RMS radius about its centre; shaded: ${pct} Student-t ` +
        `confidence band (no band where n < 2).`,
    }),
    bandChart(ctx, {
      id: "evaporated-count",
      series: "evaporated_count",
      title: "Evaporated objects",
      yTitle: "evaporated objects (cumulative)",
      timeTitle,
      log: false,
      about: `Ensemble mean of the cumulative number of objects labelled evaporated; shaded: ${pct} ` +
        `Student-t confidence band (no band where n < 2).`,
    }),
    driftChart(ctx),
  ];
}

interface Context {
  readonly agg: StudyAggregate;
  /** Colour key per point, in point order (unique). */
  readonly keys: readonly string[];
  readonly maxPoints: number;
  readonly width: number;
}

function chartContext(agg: StudyAggregate, opts: ChartOptions): Context {
  const labels = agg.points.map((p) => p.point.label);
  const unique = new Set(labels).size === labels.length;
  const keys = agg.points.map((p) => (unique ? p.point.label : `P${p.point.index}: ${p.point.label}`));
  return { agg, keys, maxPoints: Math.max(2, opts.maxPointsPerSeries ?? 600), width: opts.width ?? 640 };
}

function colour(ctx: Context, lines: boolean) {
  const legend = lines
    ? { columns: ctx.keys.length > 6 ? 2 : 1, symbolType: "stroke", symbolStrokeWidth: 3, symbolOpacity: 1 }
    : { columns: ctx.keys.length > 6 ? 2 : 1 };
  return {
    field: "point",
    type: "nominal" as const,
    title: "parameter point",
    scale: { domain: [...ctx.keys], scheme: ctx.keys.length > 10 ? "category20" : "tableau10" },
    legend,
  };
}

/** Labels only at powers of ten on a log axis (Vega's default labels every 1–9 multiple, which crowd). */
/**
 * Layers of a D-estimate chart: an error bar from `lower` to `upper` and a point at `D` (fields of the data
 * rows; the tooltip lists `tooltip` when given, else every field). Shared by the report's D-vs-parameter chart and the compare page.
 * `yTitle`: the axis title, "D/κ" (κ units) or e.g. "D (m²/s)" (engines/units.ts `diffusionUnit`).
 */
export function estimateLayers(pointSize: number, tooltip?: readonly unknown[], yTitle = "D/κ"): unknown[] {
  return [
    {
      mark: { type: "rule", strokeWidth: 2 },
      encoding: { y: { field: "lower", type: "quantitative", title: yTitle }, y2: { field: "upper" } },
    },
    {
      mark: { type: "point", filled: true, size: pointSize, tooltip: true },
      encoding: {
        y: { field: "D", type: "quantitative", title: yTitle },
        ...(tooltip ? { tooltip } : {}),
      },
    },
  ];
}

export const DECADE_LABELS =
  "abs(log(datum.value) / LN10 - round(log(datum.value) / LN10)) < 1e-6 ? datum.label : ''";

interface BandRow {
  point: string;
  t: number;
  mean: number | null;
  lower: number | null;
  upper: number | null;
  n: number;
}

interface BandChartDef {
  id: string;
  series: string;
  title: string;
  yTitle: string;
  timeTitle: string;
  log: boolean;
  about: string;
}

function bandChart(ctx: Context, def: BandChartDef): ChartSpec {
  const rows: BandRow[] = [];
  let droppedMean = 0;
  let droppedBand = 0;
  let thinned = false;
  let withData = 0;
  let singleRun = 0;
  ctx.agg.points.forEach((p, i) => {
    const band = p.series.get(def.series);
    if (band === undefined || band.k.length === 0) return;
    withData++;
    if (p.counts.done === 1) singleRun++;
    const keep = thinIndices(band, ctx.maxPoints, def.log);
    if (keep.length < band.k.length) thinned = true;
    for (const j of keep) {
      if (band.n[j] === 0) continue;
      let mean: number | null = band.mean[j];
      let lower: number | null = Number.isFinite(band.lower[j]) ? band.lower[j] : null;
      let upper: number | null = Number.isFinite(band.upper[j]) ? band.upper[j] : null;
      if (def.log) {
        if (!(band.t[j] > 0)) {
          droppedMean++;
          continue;
        }
        if (!(mean > 0)) {
          // Keep the row with nulls so the line and band break here instead of bridging the gap.
          droppedMean++;
          mean = null;
          lower = null;
          upper = null;
        } else if (lower !== null && !(lower > 0)) {
          droppedBand++;
          lower = null;
          upper = null;
        }
      }
      if (mean !== null && !Number.isFinite(mean)) mean = null;
      rows.push({ point: ctx.keys[i], t: band.t[j], mean, lower, upper, n: band.n[j] });
    }
  });
  const notes: string[] = [def.about];
  if (def.log && (droppedMean > 0 || droppedBand > 0)) {
    const parts: string[] = [];
    if (droppedMean > 0) {
      parts.push(`${droppedMean} mean value${droppedMean === 1 ? "" : "s"} (e.g. at t = 0)`);
    }
    if (droppedBand > 0) parts.push(`the band at ${droppedBand} time${droppedBand === 1 ? "" : "s"}`);
    notes.push(`Values ≤ 0 cannot be drawn on a log axis and are dropped: ${parts.join(" and ")}.`);
  }
  if (thinned) {
    notes.push(`Long series are thinned to at most ${ctx.maxPoints} frames per point for drawing.`);
  }
  if (singleRun > 0) {
    notes.push(`${singleRun} point${singleRun === 1 ? " has" : "s have"} one done realisation.`);
  }
  const caption = notes.join(" ");
  if (withData === 0 || rows.length === 0) {
    return {
      id: def.id,
      title: def.title,
      caption,
      spec: null,
      emptyReason: withData === 0
        ? `No done realisation recorded the series '${def.series}'.`
        : `Every value of '${def.series}' is ≤ 0, which a log axis cannot show.`,
    };
  }
  const scale = def.log ? { type: "log" as const, nice: false } : { zero: false };
  const yScale = def.log ? { type: "log" as const } : { zero: true };
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: 340,
    data: { values: rows },
    encoding: {
      x: { field: "t", type: "quantitative", title: def.timeTitle, scale },
      color: colour(ctx, true),
    },
    layer: [
      {
        mark: { type: "area", opacity: 0.2, invalid: "break-paths-filter-domains" },
        encoding: {
          y: { field: "lower", type: "quantitative", scale: yScale, title: def.yTitle },
          y2: { field: "upper" },
        },
      },
      {
        mark: { type: "line", strokeWidth: 2, invalid: "break-paths-filter-domains" },
        encoding: { y: { field: "mean", type: "quantitative", scale: yScale, title: def.yTitle } },
      },
      {
        // Dots carry the tooltips; bigger when there are few frames, so a lone value stays visible.
        mark: {
          type: "point",
          filled: true,
          size: rows.length <= 40 * withData ? 40 : 14,
          opacity: 0.6,
          tooltip: true,
        },
        encoding: {
          y: { field: "mean", type: "quantitative", scale: yScale, title: def.yTitle },
          tooltip: [
            { field: "point", type: "nominal", title: "point" },
            { field: "t", type: "quantitative", title: "t", format: ".4g" },
            { field: "mean", type: "quantitative", title: "mean", format: ".4g" },
            { field: "lower", type: "quantitative", title: "CI low", format: ".4g" },
            { field: "upper", type: "quantitative", title: "CI high", format: ".4g" },
            { field: "n", type: "quantitative", title: "n" },
          ],
        },
      },
    ],
    config: CONFIG,
  } as TopLevelSpec;
  return { id: def.id, title: def.title, caption, spec, emptyReason: null };
}

/** Frame indices to draw: all when short; else about `max` spread evenly (in log t for log axes). */
function thinIndices(band: SeriesBand, max: number, log: boolean): number[] {
  const m = band.k.length;
  const all = Array.from({ length: m }, (_, j) => j);
  if (m <= max) return all;
  const keep = new Set<number>();
  if (log) {
    const positive = all.filter((j) => band.t[j] > 0);
    if (positive.length > 0) {
      const lo = Math.log(band.t[positive[0]]);
      const hi = Math.log(band.t[positive[positive.length - 1]]);
      let next = lo;
      const step = (hi - lo) / (max - 1);
      for (const j of positive) {
        const lt = Math.log(band.t[j]);
        if (lt >= next - 1e-12) {
          keep.add(j);
          next = lt + step;
        }
      }
    }
  } else {
    for (let i = 0; i < max; i++) keep.add(Math.round((i * (m - 1)) / (max - 1)));
  }
  keep.add(m - 1);
  return [...keep].sort((a, b) => a - b);
}

function driftChart(ctx: Context): ChartSpec {
  const rows: { point: string; invariant: string; drift: number; signed: number; realisation: number }[] = [];
  let dropped = 0;
  let total = 0;
  ctx.agg.points.forEach((p, i) => {
    for (const d of p.drifts) {
      total++;
      const a = Math.abs(d.value);
      if (!(a > 0) || !Number.isFinite(a)) {
        dropped++;
        continue;
      }
      rows.push({
        point: ctx.keys[i],
        invariant: d.invariant,
        drift: a,
        signed: d.value,
        realisation: d.index,
      });
    }
  });
  const notes = [
    "Relative drift of each conserved quantity over a realisation, as reported by the engine (one dot per " +
    "done realisation; colour and vertical offset = parameter point). Log axis of the absolute value.",
  ];
  if (dropped > 0) {
    notes.push(
      `${dropped} of ${total} drift value${total === 1 ? "" : "s"} ${
        dropped === 1 ? "is" : "are"
      } exactly 0 ` +
        `or not finite and cannot be drawn on a log axis (dropped).`,
    );
  }
  const title = "Invariant drift per realisation";
  if (rows.length === 0) {
    return {
      id: "invariant-drift",
      title,
      caption: notes.join(" "),
      spec: null,
      emptyReason: total === 0
        ? "No done realisation reported drift scalars (drift.*): engines report them only where the dynamics " +
          "conserves them; the section Numerical credibility says which quantities are not conserved here and why."
        : "Every drift value is 0 or not finite, which a log axis cannot show.",
    };
  }
  const invariants = [...new Set(rows.map((r) => r.invariant))].sort();
  const step = Math.max(28, 10 * ctx.keys.length);
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: { step },
    data: { values: rows },
    mark: { type: "point", filled: true, size: 50, opacity: 0.75, tooltip: true },
    encoding: {
      x: {
        field: "drift",
        type: "quantitative",
        scale: { type: "log" },
        title: "|relative drift|",
        axis: { format: ".0e", labelExpr: DECADE_LABELS },
      },
      y: { field: "invariant", type: "nominal", title: "invariant", sort: invariants },
      yOffset: { field: "point", type: "nominal", scale: { domain: [...ctx.keys] } },
      color: colour(ctx, false),
      tooltip: [
        { field: "point", type: "nominal", title: "point" },
        { field: "realisation", type: "quantitative", title: "realisation" },
        { field: "invariant", type: "nominal" },
        { field: "signed", type: "quantitative", title: "drift", format: ".3e" },
      ],
    },
    config: CONFIG,
  } as TopLevelSpec;
  return { id: "invariant-drift", title, caption: notes.join(" "), spec, emptyReason: null };
}
