/**
 * Study reports: one offline HTML page per study revision, built from the database alone, plus each chart as a
 * figure (SVG, optionally PNG, and the plotted data as CSV) for papers and slides.
 *
 *   database → aggregate (store reads + ensemble statistics) → Vega-Lite specs → Vega (compiled in Deno)
 *            → HTML page with the Vega runtime inlined; figures rendered in Deno (figures.ts)
 *
 * @example
 * ```ts
 * import { writeReport } from "./reports/mod.ts";
 * const { html, figuresDir } = await writeReport("runs/film-patch.sqlite", { figures: { png: true } });
 * // html       = "runs/film-patch-report.html"
 * // figuresDir = "runs/film-patch-report-figures"   (msd.svg, msd.csv, msd.png, …)
 * ```
 */
import { basename, dirname, join, resolve } from "node:path";
import { openStoreReadOnly } from "../store/reads.ts";
import { type EnsembleResult, readEnsembleResults } from "../store/ensemble.ts";
import { aggregateStudy } from "./aggregate.ts";
import { buildAnalysisSection } from "./analysis_section.ts";
import { buildFieldSnapshotSection, FIELD_SNAPSHOT_STYLE } from "./field_snapshots_section.ts";
import { type ExtraSection, type PagePart, type RenderedChart, renderReportHtml } from "./html.ts";
import { type FigureOptions, writeAtomic, writeFigures } from "./figures.ts";
import { reportUnits, unitsSection } from "./quantities.ts";
import { compileChart, readVegaRuntime } from "./render.ts";
import { buildCredibilitySection, CREDIBILITY_STYLE } from "./credibility_section.ts";
import { buildCharts, CHART_SERIES, type ChartOptions, type ChartSpec } from "./specs.ts";
import { buildSummary, type ProvisionalAnalysis } from "./summary.ts";

export { StoreReadError } from "../store/reads.ts";
export { aggregateStudy, type StudyAggregate } from "./aggregate.ts";
export { buildCharts, type ChartSpec } from "./specs.ts";
export { type AnalysisSection, buildAnalysisSection } from "./analysis_section.ts";
export { type CompareOptions, writeComparePage } from "./compare.ts";
export { escapeHtml, type ExtraSection, renderReportHtml } from "./html.ts";
export { chartCsv, type FigureOptions, figureSpec, writeFigures } from "./figures.ts";
export { meanInterval, Welford } from "./intervals.ts";
export type { ProvisionalAnalysis } from "./summary.ts";

export interface WriteReportOptions {
  /** Page path; default `<database folder>/<study name>-report.html` (`-r<id>` added when `studyId` is given). */
  out?: string;
  /** Study revision id; default the latest. */
  studyId?: number;
  /** Axis unit labels; default the units recorded with the study. */
  units?: ChartOptions["units"];
  /** Time stamp printed on the page; default now. */
  generatedAt?: string;
  /**
   * Include the "Answers" section from the stored ensemble results (default true). Without stored results
   * the section is a note telling the user to run `spindrift analyse`.
   */
  analysis?: boolean;
  /**
   * Results to show instead of the stored ones, with a note that they are provisional (an unfinished run
   * analysed for this page, not stored).
   */
  provisional?: { readonly results: readonly EnsembleResult[]; readonly analysis: ProvisionalAnalysis };
  /** Figure files: size, font scale, PNG (default: SVG and CSV at the page's size). */
  figures?: FigureOptions;
  /**
   * More self-contained sections placed after "Results" (each a `<section id=…>` with a nav link), e.g. a
   * section of numerical checks built by another module from the same database.
   */
  sections?: readonly ExtraSection[];
}

/**
 * Writes the report page and the figures folder beside it; returns both paths. Throws `StoreReadError` when
 * the database cannot be read (missing, not a spindrift database, unknown study id).
 */
export async function writeReport(
  dbPath: string,
  opts: WriteReportOptions = {},
): Promise<{ html: string; figuresDir: string }> {
  const db = openStoreReadOnly(dbPath);
  let allCharts: ChartSpec[];
  let page: string;
  let out: string;
  try {
    const agg = aggregateStudy(db, { studyId: opts.studyId, series: CHART_SERIES });
    out = opts.out ?? join(
      dirname(dbPath),
      `${safeFileName(agg.study.name)}${opts.studyId === undefined ? "" : `-r${agg.study.id}`}-report.html`,
    );
    const stored = opts.provisional?.results ?? readEnsembleResults(db, agg.study.id);
    // κ: recorded with the units since this version; for older databases the analysis stored it with the fit.
    const vinenKappa = stored.map((r) => r.detail.kappa).find((k): k is number => typeof k === "number");
    const units = reportUnits(
      opts.units ? { ...agg.study.units, ...opts.units } : agg.study.units,
      vinenKappa,
    );
    const chartOpts: ChartOptions = {
      units: units.labels ? { length: units.labels.length, time: units.labels.time } : undefined,
      kappa: units.kappaUnits ? undefined : units.kappa,
    };
    const compiled = (chart: ChartSpec): RenderedChart => ({
      chart,
      vega: chart.spec === null ? null : compileChart(chart.spec).vega,
    });
    const charts = buildCharts(agg, chartOpts);
    let analysis: PagePart[] | undefined;
    let analysisCharts: readonly ChartSpec[] = [];
    let analysisProvenance: readonly (readonly [string, string])[] | undefined;
    const results = opts.analysis === false ? [] : stored;
    if (opts.analysis !== false) {
      const section = buildAnalysisSection(agg, results, { ...chartOpts, dbPath });
      analysis = section.parts.map((p) => ("chart" in p ? { rendered: compiled(p.chart) } : p));
      analysisCharts = section.charts;
      analysisProvenance = section.provenance;
    }
    allCharts = [...charts, ...analysisCharts];
    const condensate = buildFieldSnapshotSection(db, agg.study.id, units.labels?.length);
    const formats = opts.figures?.png ? ["svg", "png", "csv"] as const : ["svg", "csv"] as const;
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
        ...(opts.sections ?? []),
      ],
      analysis,
      summary: buildSummary(agg, results, { ...chartOpts, dbPath, provisional: opts.provisional?.analysis }),
      unitsHtml: unitsSection(units),
      units,
      analysisHasEvaporation: results.some((r) => r.analysis === "evaporation" && r.name === "evaporated"),
      analysisProvenance: opts.provisional
        ? [...(analysisProvenance ?? []), ["analysis", "provisional: computed for this page, not stored"]]
        : analysisProvenance,
      agg,
      charts: charts.map(compiled),
      vegaRuntime: await readVegaRuntime(),
      dbPath: resolve(dbPath),
      generatedAt: opts.generatedAt ?? new Date().toISOString(),
      svgDirName: basename(figuresDirFor(out)),
      figureFormats: formats,
    });
  } finally {
    db.close();
  }
  const figuresDir = figuresDirFor(out);
  await writeFigures(figuresDir, allCharts, opts.figures ?? {});
  await writeAtomic(out, page);
  return { html: out, figuresDir };
}

/** The figures folder of a page: `<page without .html>-figures`. */
export function figuresDirFor(htmlPath: string): string {
  return `${htmlPath.replace(/\.html?$/i, "")}-figures`;
}

/** Letters, digits, '-', '_' and '.' only (study names are identifier-like, but the database is not trusted). */
function safeFileName(name: string): string {
  const s = name.replace(/[^A-Za-z0-9._-]+/g, "_").replace(/^[._]+/, "").slice(0, 80);
  return s === "" ? "study" : s;
}
