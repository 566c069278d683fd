/**
 * Figures for papers and slides: every chart of a page as a standalone SVG (and PNG, on request) with its title
 * and legend drawn in, at a chosen size and font scale, and the plotted data beside it as CSV (the numbers as
 * drawn, columns named with their units where the axis gives one).
 *
 *   chart spec ──figureSpec (title, size, fonts)──▶ Vega-Lite ──compile──▶ Vega ──renderSvg──▶ <id>.svg
 *                                                                               └─svgToPng──▶ <id>.png
 *   chart spec ──chartCsv (every data set of the spec)──▶ <id>.csv
 *
 * @example
 * ```ts
 * await writeFigures("out/film-figures", charts, { png: true, width: 900, fontScale: 1.4 });
 * // out/film-figures/msd.svg, msd.png, msd.csv, …
 * ```
 */
import type { TopLevelSpec } from "vega-lite";
import { compileChart, renderSvg } from "./render.ts";
import { svgToPng } from "./png.ts";
import type { ChartSpec } from "./specs.ts";

export interface FigureOptions {
  /** Plot width in pixels (facets: the whole row); default: the chart's own. */
  readonly width?: number;
  /** Plot height in pixels (facets: each panel); default: the chart's own. */
  readonly height?: number;
  /** Multiplies every font size (axis, legend, title, panel headers); default 1. */
  readonly fontScale?: number;
  /** Also write PNG files (default false). */
  readonly png?: boolean;
  /** Pixels per SVG pixel in the PNG (default 2). */
  readonly pngScale?: number;
}

// deno-lint-ignore no-explicit-any
type Json = any;

/** Figure fonts: DejaVu Sans first (the PNG renderer ships it), then common sans-serif families. */
const FIGURE_FONT = "DejaVu Sans, Helvetica, Arial, sans-serif";

/** The chart's spec as a standalone figure: its title drawn in, resized and with scaled fonts. */
export function figureSpec(chart: ChartSpec, o: FigureOptions = {}): TopLevelSpec {
  if (chart.spec === null) throw new RangeError(`chart ${chart.id} has no data`);
  const spec: Json = structuredClone(chart.spec);
  const k = o.fontScale ?? 1;
  if (!(k > 0 && k <= 5)) throw new RangeError(`font scale must be in (0, 5], got ${k}`);
  const c: Json = spec.config ?? {};
  const scaled = (x: number | undefined, fallback: number) => Math.round((x ?? fallback) * k * 10) / 10;
  spec.config = {
    ...c,
    font: FIGURE_FONT,
    axis: {
      ...c.axis,
      labelFontSize: scaled(c.axis?.labelFontSize, 11),
      titleFontSize: scaled(c.axis?.titleFontSize, 12),
    },
    legend: {
      ...c.legend,
      labelFontSize: scaled(c.legend?.labelFontSize, 11),
      titleFontSize: scaled(c.legend?.titleFontSize, 11),
      labelLimit: Math.round((c.legend?.labelLimit ?? 420) * k),
    },
    header: {
      ...c.header,
      labelFontSize: scaled(c.header?.labelFontSize, 11),
      titleFontSize: scaled(c.header?.titleFontSize, 11),
    },
    title: { fontSize: scaled(undefined, 15), anchor: "start", offset: 10 * k },
  };
  spec.title = chart.title;
  spec.background = "white";
  spec.padding = Math.round(8 * k);
  if (spec.facet !== undefined && spec.spec !== undefined) {
    const cols = Math.max(1, spec.columns ?? 1);
    if (o.width !== undefined) spec.spec.width = Math.max(60, Math.floor((o.width - 40 * (cols - 1)) / cols));
    if (o.height !== undefined) spec.spec.height = o.height;
  } else {
    if (o.width !== undefined) spec.width = o.width;
    if (o.height !== undefined) spec.height = o.height;
  }
  return spec as TopLevelSpec;
}

/** The data sets of a spec (top level, layers, facet inner spec), each with its name. */
function dataSets(
  spec: Json,
  out: { name: string; values: Json[] }[] = [],
): { name: string; values: Json[] }[] {
  if (spec === null || typeof spec !== "object") return out;
  if (Array.isArray(spec.data?.values)) {
    out.push({ name: spec.data.name ?? `data ${out.length + 1}`, values: spec.data.values });
  }
  for (const l of spec.layer ?? []) dataSets(l, out);
  if (spec.spec) dataSets(spec.spec, out);
  return out;
}

/** Field → unit from the axis and legend titles of the spec ("time t [ms]" gives t → ms). */
function fieldUnits(spec: Json, out = new Map<string, string>()): Map<string, string> {
  if (spec === null || typeof spec !== "object") return out;
  const enc: Record<string, Json> = spec.encoding ?? {};
  const unitOf = (ch: Json) => /\[([^\]]+)\]\s*$/.exec(typeof ch?.title === "string" ? ch.title : "")?.[1];
  for (const [name, ch] of Object.entries(enc)) {
    // x2 and y2 share the axis (and the unit) of x and y.
    const unit = unitOf(ch) ?? (name === "x2" || name === "y2" ? unitOf(enc[name[0]]) : undefined);
    if (unit && typeof ch?.field === "string" && !out.has(ch.field)) out.set(ch.field, unit);
  }
  for (const l of spec.layer ?? []) fieldUnits(l, out);
  if (spec.spec) fieldUnits(spec.spec, out);
  return out;
}

function csvCell(v: unknown): string {
  if (v === null || v === undefined) return "";
  if (typeof v === "number") return Number.isFinite(v) ? String(v) : "";
  const s = typeof v === "string" ? v : JSON.stringify(v);
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/**
 * The plotted data of a chart as CSV: one header line, then one row per plotted datum; with several data sets
 * (lines, guides, windows) a first column `part` names the set. Column names carry their unit where the axis
 * title gives one (`t [ms]`). Null when the chart has no data.
 */
export function chartCsv(chart: ChartSpec): string | null {
  if (chart.spec === null) return null;
  const sets = dataSets(chart.spec);
  if (sets.length === 0) return null;
  const units = fieldUnits(chart.spec);
  const columns: string[] = [];
  for (const s of sets) {
    for (const row of s.values) {
      for (const key of Object.keys(row)) if (!columns.includes(key)) columns.push(key);
    }
  }
  const many = sets.length > 1;
  const head = [
    ...(many ? ["part"] : []),
    ...columns.map((c) => (units.has(c) ? `${c} [${units.get(c)}]` : c)),
  ];
  const lines = [head.map(csvCell).join(",")];
  for (const s of sets) {
    for (const row of s.values) {
      lines.push([...(many ? [s.name] : []), ...columns.map((c) => row[c])].map(csvCell).join(","));
    }
  }
  return lines.join("\n") + "\n";
}

/**
 * Writes `<id>.svg`, `<id>.csv` (and `<id>.png` with `png`) for every chart with data into `dir`, and removes
 * those files of charts without data (no stale figures). Returns the files written.
 */
export async function writeFigures(
  dir: string,
  charts: readonly ChartSpec[],
  o: FigureOptions = {},
): Promise<string[]> {
  await Deno.mkdir(dir, { recursive: true });
  const written: string[] = [];
  for (const c of charts) {
    const base = `${dir}/${c.id}`;
    if (c.spec === null) {
      for (const ext of ["svg", "png", "csv"]) await Deno.remove(`${base}.${ext}`).catch(() => {});
      continue;
    }
    const svg = await renderSvg(compileChart(figureSpec(c, o)).vega);
    await writeAtomic(`${base}.svg`, svg);
    written.push(`${base}.svg`);
    const csv = chartCsv(c);
    if (csv !== null) {
      await writeAtomic(`${base}.csv`, csv);
      written.push(`${base}.csv`);
    }
    if (o.png) {
      await writeAtomic(`${base}.png`, await svgToPng(svg, { scale: o.pngScale }));
      written.push(`${base}.png`);
    } else {
      await Deno.remove(`${base}.png`).catch(() => {});
    }
  }
  return written;
}

/** Writes through a temporary file and a rename, so a reader never sees half a file. */
export async function writeAtomic(path: string, content: string | Uint8Array): Promise<void> {
  const tmp = `${path}.tmp-${Deno.pid}`;
  if (typeof content === "string") await Deno.writeTextFile(tmp, content);
  else await Deno.writeFile(tmp, content);
  await Deno.rename(tmp, path);
}
