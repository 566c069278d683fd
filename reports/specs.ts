/**
 * Vega-Lite (v6) chart specifications for a study report, built from a `StudyAggregate`. Each chart carries
 * its data inline (`data.values`, named per layer so the figure export can write it as CSV), so a spec is
 * self-contained and the page works offline.
 *
 * Charts (one colour per parameter point, the same colours in every chart and on the compare page; points are
 * named in words, "initial count = 140", not by their raw key):
 * - `msd`: ensemble mean-square displacement vs time, log–log, with the 95 % band;
 * - `cluster-rms-radius`: main-cluster RMS radius vs time with band;
 * - `evaporated-count`: cumulative evaporated objects vs time with band (a count: the band stops at zero);
 * - `invariant-drift` (diagnostics section): relative invariant drift of every realisation (strip plot, log axis).
 * The failure table is HTML (see `html.ts`).
 *
 * Physical-unit studies get readable prefixes on their axes (ms, µm: `quantities.ts`); κ-unit studies are drawn
 * as stored. Log axes cannot show values ≤ 0: such values are dropped (the mean line and band break there) and
 * the caption says how many. Series longer than `maxPointsPerSeries` frames are thinned (evenly in frame index
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
import { pointColour, pointNames } from "./labels.ts";
import {
  axisTitle,
  lengthScale,
  type ReportUnits,
  reportUnits,
  type Scale,
  squaredUnit,
  timeScale,
} from "./quantities.ts";

/** One chart of the report: its spec, or the reason it has nothing to show. */
export interface ChartSpec {
  /** Stable id: used for the page container (`view-<id>`) and the figure files (`<id>.svg`, `.png`, `.csv`). */
  readonly id: string;
  readonly title: string;
  /** Plain text under the chart (HTML-escaped by the page). */
  readonly caption: string;
  /** Null when there is no data to plot. */
  readonly spec: TopLevelSpec | null;
  /** Why `spec` is null, in one sentence. */
  readonly emptyReason: string | null;
  /** Where the page shows it (default the results). */
  readonly section?: "results" | "diagnostics";
}

export interface ChartOptions {
  /** Unit labels shown on the axes; omitted → generic "length"/"time" wording. */
  readonly units?: { readonly length: string; readonly time: string };
  /** κ in the study's units (physical units: the recorded value; D is then also shown as D/κ). */
  readonly kappa?: number;
  /** Most frames drawn per point and series (default 600). */
  readonly maxPointsPerSeries?: number;
  /** Plot width in pixels (default 800). */
  readonly width?: number;
}

/** The units of a chart's options (labels and κ). */
export function chartUnits(opts: ChartOptions): ReportUnits {
  const rec: Record<string, string> = opts.units ? { ...opts.units } : {};
  if (opts.kappa !== undefined) rec.kappa = String(opts.kappa);
  return reportUnits(rec);
}

/** Vega-Lite schema URL of every chart (shared with the analysis and compare charts). */
export const SCHEMA = "https://vega.github.io/schema/vega-lite/v6.json";

/** The series the charts draw (the aggregate can be limited to these). */
export const CHART_SERIES: readonly string[] = ["msd", "cluster_rms_radius", "evaporated_count"];

/** Shared look: readable sizes for slides and screens; overlapping axis labels are dropped, never drawn twice. */
export const CONFIG = {
  font: "system-ui, -apple-system, 'Segoe UI', Roboto, 'Helvetica Neue', Arial, 'DejaVu Sans', sans-serif",
  axis: {
    labelFontSize: 12,
    titleFontSize: 13,
    titleFontWeight: 600,
    grid: true,
    gridColor: "#e6e6e6",
    labelOverlap: "greedy",
    labelSeparation: 6,
    labelFlush: true,
  },
  legend: {
    labelFontSize: 12,
    titleFontSize: 12,
    labelLimit: 420,
    titleLimit: 420,
    orient: "bottom",
    direction: "vertical",
  },
  header: { labelFontSize: 12, titleFontSize: 12, labelLimit: 600 },
  view: { stroke: "#cccccc" },
} as const;

/** Readable names and colours of a study's points, in point order (the same on every page). */
export interface PointView {
  readonly names: readonly string[];
  readonly colours: readonly string[];
}

/** Names and colours of the aggregate's points. */
export function pointView(agg: StudyAggregate): PointView {
  const n = agg.points.length;
  return {
    names: pointNames(agg.points.map((p) => ({ varied: p.point.varied, label: p.point.label }))),
    colours: agg.points.map((_, i) => pointColour(i, n)),
  };
}

/**
 * The colour encoding of the parameter points (field `point` holds the point's name). `lines`: legend symbols are
 * strokes (line charts) instead of filled symbols.
 */
export function pointColourEncoding(view: PointView, lines: boolean, field = "point") {
  const columns = view.names.length > 6 ? 2 : 1;
  return {
    field,
    type: "nominal" as const,
    title: "parameter point",
    scale: { domain: [...view.names], range: [...view.colours] },
    legend: lines
      ? { columns, symbolType: "stroke", symbolStrokeWidth: 3, symbolOpacity: 1, symbolSize: 300 }
      : { columns },
  };
}

/** Axis format for numbers far from 1 (scientific notation instead of 10,000,000,000 or 0.000002). */
export function numberFormat(maxAbs: number): { format?: string } {
  return maxAbs >= 1e5 || (maxAbs > 0 && maxAbs < 1e-3) ? { format: ".2~e" } : {};
}

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
  return [
    bandChart(ctx, {
      id: "msd",
      series: "msd",
      title: "Mean-square displacement of main-cluster objects",
      y: "MSD ⟨|Δr|²⟩",
      dim: "length2",
      log: true,
      count: false,
      about:
        `Ensemble mean over done realisations of the mean-square displacement from t = 0 of objects in ` +
        `the main cluster at both ends (cluster-centre drift removed); shaded: ${pct} Student-t confidence ` +
        `band of the mean (no band where n < 2). Log–log axes.`,
    }),
    bandChart(ctx, {
      id: "cluster-rms-radius",
      series: "cluster_rms_radius",
      title: "RMS radius of the main cluster",
      y: "R_rms",
      dim: "length",
      log: false,
      count: false,
      about: `Ensemble mean of the main cluster's RMS radius about its centre; shaded: ${pct} Student-t ` +
        `confidence band (no band where n < 2).`,
    }),
    bandChart(ctx, {
      id: "evaporated-count",
      series: "evaporated_count",
      title: "Evaporated objects",
      y: "evaporated objects (cumulative)",
      dim: "count",
      log: false,
      count: true,
      about: `Ensemble mean of the cumulative number of objects labelled evaporated; shaded: ${pct} ` +
        `Student-t confidence band of the mean (no band where n < 2), cut at zero (a count cannot be negative).`,
    }),
    driftChart(ctx),
  ];
}

interface Context {
  readonly agg: StudyAggregate;
  readonly view: PointView;
  readonly units: ReportUnits;
  readonly maxPoints: number;
  readonly width: number;
}

function chartContext(agg: StudyAggregate, opts: ChartOptions): Context {
  return {
    agg,
    view: pointView(agg),
    units: chartUnits(opts),
    maxPoints: Math.max(2, opts.maxPointsPerSeries ?? 600),
    width: opts.width ?? 800,
  };
}

/**
 * Layers of a D-estimate chart: an error bar from `lower` to `upper` and a point at `D` (fields of the data
 * rows; the tooltip lists `tooltip` when given, else every field). Shared by the report's D-per-point chart and
 * the compare page. `yTitle`: the axis title, "D/κ" or e.g. "D (m²/s)".
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

/** Labels only at powers of ten on a log axis (Vega's default labels every 1–9 multiple, which crowd). */
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
  /** Quantity on the y axis (without unit). */
  y: string;
  dim: "length" | "length2" | "count";
  log: boolean;
  /** A count: the band's lower end is cut at zero. */
  count: boolean;
  about: string;
}

/** Display scales of a band chart's axes from its largest time and value. */
function bandScales(ctx: Context, def: BandChartDef, tMax: number, yMax: number): { t: Scale; y: Scale } {
  const t = timeScale(ctx.units, tMax);
  if (def.dim === "count") return { t, y: { factor: 1, unit: "" } };
  if (def.dim === "length") return { t, y: lengthScale(ctx.units, yMax) };
  const l = lengthScale(ctx.units, Math.sqrt(yMax));
  return { t, y: { factor: l.factor * l.factor, unit: squaredUnit(l.unit) } };
}

function bandChart(ctx: Context, def: BandChartDef): ChartSpec {
  const rows: BandRow[] = [];
  let droppedMean = 0;
  let droppedBand = 0;
  let thinned = false;
  let withData = 0;
  let singleRun = 0;
  let clipped = 0;
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
      if (def.count && lower !== null && lower < 0) {
        clipped++;
        lower = 0;
      }
      if (mean !== null && !Number.isFinite(mean)) mean = null;
      rows.push({ point: ctx.view.names[i], t: band.t[j], mean, lower, upper, n: band.n[j] });
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
  const tMax = Math.max(...rows.map((r) => Math.abs(r.t)));
  const yMax = Math.max(...rows.map((r) => Math.abs(r.upper ?? r.mean ?? 0)));
  const sc = bandScales(ctx, def, tMax, yMax);
  const shown = rows.map((r) => ({
    point: r.point,
    t: r.t * sc.t.factor,
    mean: r.mean === null ? null : r.mean * sc.y.factor,
    lower: r.lower === null ? null : r.lower * sc.y.factor,
    upper: r.upper === null ? null : r.upper * sc.y.factor,
    n: r.n,
  }));
  const yTitle = def.dim === "count" ? def.y : axisTitle(def.y, sc.y.unit || generic(def.dim));
  const timeTitle = axisTitle("time t", sc.t.unit);
  const scale = def.log ? { type: "log" as const, nice: false } : { zero: false };
  const yScale = def.log ? { type: "log" as const } : { zero: true };
  const yAxis = { ...numberFormat(yMax * sc.y.factor) };
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: 340,
    data: { name: "ensemble mean and band", values: shown },
    encoding: {
      x: {
        field: "t",
        type: "quantitative",
        title: timeTitle,
        scale,
        axis: { ...numberFormat(tMax * sc.t.factor) },
      },
      color: pointColourEncoding(ctx.view, true),
    },
    layer: [
      {
        mark: { type: "area", opacity: 0.2, invalid: "break-paths-filter-domains" },
        encoding: {
          y: { field: "lower", type: "quantitative", scale: yScale, title: yTitle, axis: yAxis },
          y2: { field: "upper" },
        },
      },
      {
        mark: { type: "line", strokeWidth: 2, invalid: "break-paths-filter-domains" },
        encoding: { y: { field: "mean", type: "quantitative", scale: yScale, title: yTitle, axis: yAxis } },
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
          y: { field: "mean", type: "quantitative", scale: yScale, title: yTitle, axis: yAxis },
          tooltip: [
            { field: "point", type: "nominal", title: "point" },
            { field: "t", type: "quantitative", title: timeTitle, format: ".4g" },
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

/** Unit wording when the study recorded none. */
function generic(dim: BandChartDef["dim"]): string {
  return dim === "length" ? "length" : dim === "length2" ? "length²" : "";
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
        point: ctx.view.names[i],
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
      section: "diagnostics",
    };
  }
  const invariants = [...new Set(rows.map((r) => r.invariant))].sort();
  const step = Math.max(28, 10 * ctx.view.names.length);
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: { step },
    data: { name: "drift per realisation", values: rows },
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
      yOffset: { field: "point", type: "nominal", scale: { domain: [...ctx.view.names] } },
      color: pointColourEncoding(ctx.view, false),
      tooltip: [
        { field: "point", type: "nominal", title: "point" },
        { field: "realisation", type: "quantitative", title: "realisation" },
        { field: "invariant", type: "nominal" },
        { field: "signed", type: "quantitative", title: "drift", format: ".3e" },
      ],
    },
    config: CONFIG,
  } as TopLevelSpec;
  return {
    id: "invariant-drift",
    title,
    caption: notes.join(" "),
    spec,
    emptyReason: null,
    section: "diagnostics",
  };
}
