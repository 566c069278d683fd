/**
 * Study reports: one offline HTML page per study revision, built from the database alone, plus each chart as
 * an SVG file for slides.
 *
 *   database → aggregate (store reads + ensemble statistics) → Vega-Lite specs → Vega (compiled in Deno)
 *            → HTML page with the Vega runtime inlined, and SVG files rendered in Deno
 *
 * @example
 * ```ts
 * import { writeReport } from "./reports/mod.ts";
 * const { html, svgDir } = await writeReport("runs/film-patch.sqlite", {});
 * // html   = "runs/film-patch-report.html"
 * // svgDir = "runs/film-patch-report-svg"   (msd.svg, cluster-rms-radius.svg, …)
 * ```
 */
import { basename, dirname, join, resolve } from "node:path";
import { openStoreReadOnly } from "../store/reads.ts";
import { readEnsembleResults } from "../store/ensemble.ts";
import { aggregateStudy } from "./aggregate.ts";
import { buildAnalysisSection } from "./analysis_section.ts";
import { buildFieldSnapshotSection, FIELD_SNAPSHOT_STYLE } from "./field_snapshots_section.ts";
import { buildCredibilitySection, CREDIBILITY_STYLE } from "./credibility_section.ts";
import { type PagePart, type RenderedChart, renderReportHtml } from "./html.ts";
import { compileChart, readVegaRuntime, renderSvg } from "./render.ts";
import { buildCharts, CHART_SERIES, type ChartOptions, type ChartSpec } from "./specs.ts";

export { StoreReadError } from "../store/reads.ts";
export { aggregateStudy, type StudyAggregate } from "./aggregate.ts";
export { buildCharts, type ChartSpec } from "./specs.ts";
export { type AnalysisSection, buildAnalysisSection } from "./analysis_section.ts";
export { type CompareOptions, writeComparePage } from "./compare.ts";
export { escapeHtml, renderReportHtml } from "./html.ts";
export { meanInterval, Welford } from "./intervals.ts";

export interface WriteReportOptions {
  /** Page path; default `<database folder>/<study name>-report.html` (`-r<id>` added when `studyId` is given). */
  out?: string;
  /** Study revision id; default the latest. */
  studyId?: number;
  /** Axis unit labels (e.g. from the engine's capabilities); default generic wording. */
  units?: ChartOptions["units"];
  /** Time stamp printed on the page; default now. */
  generatedAt?: string;
  /**
   * Include the "Answers" section from the stored ensemble results (default true). Without stored results
   * the section is a note telling the user to run `spindrift analyse`.
   */
  analysis?: boolean;
}

/**
 * Writes the report page and the SVG folder beside it; returns both paths. Throws `StoreReadError` when the
 * database cannot be read (missing, not a spindrift database, unknown study id).
 */
export async function writeReport(
  dbPath: string,
  opts: WriteReportOptions = {},
): Promise<{ html: string; svgDir: string }> {
  const db = openStoreReadOnly(dbPath);
  let charts: RenderedChart[];
  let svgCharts: RenderedChart[];
  let page: string;
  let out: string;
  try {
    const agg = aggregateStudy(db, { studyId: opts.studyId, series: CHART_SERIES });
    out = opts.out ?? join(
      dirname(dbPath),
      `${safeFileName(agg.study.name)}${opts.studyId === undefined ? "" : `-r${agg.study.id}`}-report.html`,
    );
    const units = opts.units ?? unitsOf(agg.study.units);
    const compiled = (chart: ChartSpec): RenderedChart => ({
      chart,
      vega: chart.spec === null ? null : compileChart(chart.spec).vega,
    });
    charts = buildCharts(agg, { units }).map(compiled);
    let analysis: PagePart[] | undefined;
    let headline: string | undefined;
    let analysisProvenance: readonly (readonly [string, string])[] | undefined;
    if (opts.analysis !== false) {
      const section = buildAnalysisSection(agg, readEnsembleResults(db, agg.study.id), { units, dbPath });
      analysis = section.parts.map((p) => ("chart" in p ? { rendered: compiled(p.chart) } : p));
      headline = section.headline;
      analysisProvenance = section.provenance;
    }
    svgCharts = [...charts, ...(analysis ?? []).flatMap((p) => ("rendered" in p ? [p.rendered] : []))];
    const condensate = buildFieldSnapshotSection(db, agg.study.id, units?.length);
    const credibility = buildCredibilitySection(
      db,
      agg.study.id,
      new Map(agg.points.map((p) => [p.point.pointHash, p.point.label])),
    );
    page = renderReportHtml({
      sections: [
        ...(condensate === ""
          ? []
          : [{ id: "condensate", title: "Condensate", html: condensate, style: FIELD_SNAPSHOT_STYLE }]),
        ...(credibility === "" ? [] : [{
          id: "credibility",
          title: "Numerical credibility",
          html: credibility,
          style: CREDIBILITY_STYLE,
        }]),
      ],
      analysis,
      headline,
      analysisProvenance,
      agg,
      charts,
      vegaRuntime: await readVegaRuntime(),
      dbPath: resolve(dbPath),
      generatedAt: opts.generatedAt ?? new Date().toISOString(),
      svgDirName: basename(svgDirFor(out)),
    });
  } finally {
    db.close();
  }
  const svgDir = svgDirFor(out);
  await Deno.mkdir(svgDir, { recursive: true });
  for (const c of svgCharts) {
    const file = join(svgDir, `${c.chart.id}.svg`);
    if (c.vega === null) await Deno.remove(file).catch(() => {});
    else await writeAtomic(file, await renderSvg(c.vega));
  }
  await writeAtomic(out, page);
  return { html: out, svgDir };
}

function svgDirFor(htmlPath: string): string {
  return `${htmlPath.replace(/\.html?$/i, "")}-svg`;
}

/** Letters, digits, '-', '_' and '.' only (study names are identifier-like, but the database is not trusted). */
function safeFileName(name: string): string {
  const s = name.replace(/[^A-Za-z0-9._-]+/g, "_").replace(/^[._]+/, "").slice(0, 80);
  return s === "" ? "study" : s;
}

async function writeAtomic(path: string, text: string): Promise<void> {
  const tmp = `${path}.tmp-${Deno.pid}`;
  await Deno.writeTextFile(tmp, text);
  await Deno.rename(tmp, path);
}

/** Axis units recorded with the study (from the engine's capabilities), if complete. */
function unitsOf(units: Readonly<Record<string, string>>): ChartOptions["units"] {
  return units.length && units.time ? { length: units.length, time: units.time } : undefined;
}
