/**
 * The compare page: two or more studies side by side on shared axes, one self-contained offline HTML page
 * (same runtime, safety rules and automation attributes as the study report, see `html.ts`) plus each chart
 * as SVG.
 *
 * Charts (one panel per study, panels share their axes so curves can be compared by eye):
 * - `compare-msd`: ensemble-mean MSD vs time, log–log;
 * - `compare-rms-radius`: main-cluster RMS radius vs time;
 * - `compare-evaporated`: cumulative evaporated objects vs time;
 * - `compare-d`: D/κ per parameter point with the stored intervals (MSD, R_rms and Vinen estimates).
 * A table lists the studies (name, question, engine, points, realisations, database) and the stored D/κ of
 * every point, each number with its full-precision value in `data-value`.
 *
 * @example
 * ```ts
 * const { html } = await writeComparePage(["a.sqlite", "b.sqlite"], { out: "a-vs-b.html" });
 * ```
 */
import { basename, resolve } from "node:path";
import type { TopLevelSpec } from "vega-lite";
import { type EnsembleResult, readEnsembleResults } from "../store/ensemble.ts";
import { openStoreReadOnly } from "../store/reads.ts";
import { aggregateStudy, type StudyAggregate } from "./aggregate.ts";
import {
  BOOT,
  ERROR_HOOK,
  escapeHtml,
  formatNumber,
  inlineScriptSource,
  jsonForScript,
  type RenderedChart,
  STYLE,
} from "./html.ts";
import { compileChart, readVegaRuntime, renderSvg } from "./render.ts";
import { type ChartSpec, CONFIG, estimateLayers, SCHEMA } from "./specs.ts";

export interface CompareOptions {
  /** Page path (default `compare.html` in the current folder). */
  readonly out?: string;
  /** Time stamp printed on the page; default now. */
  readonly generatedAt?: string;
  /** Plot width per panel in pixels (default 300). */
  readonly panelWidth?: number;
}

interface StudyEntry {
  readonly key: string;
  readonly dbPath: string;
  readonly agg: StudyAggregate;
  readonly results: readonly EnsembleResult[];
}

/**
 * Writes the compare page for the latest study revision of each database, and the SVG folder beside it.
 * Throws `StoreReadError` for an unreadable database and `RangeError` for fewer than two databases.
 */
export async function writeComparePage(
  dbPaths: readonly string[],
  opts: CompareOptions = {},
): Promise<{ html: string; svgDir: string }> {
  if (dbPaths.length < 2) {
    throw new RangeError(`compare needs at least two study databases, got ${dbPaths.length}`);
  }
  const studies: StudyEntry[] = [];
  const seen = new Map<string, number>();
  for (const path of dbPaths) {
    const db = openStoreReadOnly(path);
    try {
      const agg = aggregateStudy(db, { series: ["msd", "cluster_rms_radius", "evaporated_count"] });
      const n = (seen.get(agg.study.name) ?? 0) + 1;
      seen.set(agg.study.name, n);
      studies.push({ key: "", dbPath: path, agg, results: readEnsembleResults(db, agg.study.id) });
    } finally {
      db.close();
    }
  }
  const keyed = studies.map((s, i) => ({
    ...s,
    key: (seen.get(s.agg.study.name) ?? 0) > 1
      ? `${s.agg.study.name} (${i + 1}: ${basename(s.dbPath)})`
      : s.agg
        .study.name,
  }));
  const width = opts.panelWidth ?? 300;
  const charts = [
    bandChart(keyed, width, "compare-msd", "msd", "Mean-square displacement", "MSD (length²)", true),
    bandChart(
      keyed,
      width,
      "compare-rms-radius",
      "cluster_rms_radius",
      "RMS radius of the main cluster",
      "R_rms (length)",
      false,
    ),
    bandChart(
      keyed,
      width,
      "compare-evaporated",
      "evaporated_count",
      "Evaporated objects",
      "evaporated (cumulative)",
      false,
    ),
    dChart(keyed, width),
  ];
  const rendered: RenderedChart[] = charts.map((chart) => ({
    chart,
    vega: chart.spec === null ? null : compileChart(chart.spec).vega,
  }));
  const out = opts.out ?? "compare.html";
  const svgDir = `${out.replace(/\.html?$/i, "")}-svg`;
  const page = comparePage(keyed, rendered, {
    runtime: await readVegaRuntime(),
    generatedAt: opts.generatedAt ?? new Date().toISOString(),
    svgDirName: basename(svgDir),
  });
  await Deno.mkdir(svgDir, { recursive: true });
  for (const c of rendered) {
    const file = `${svgDir}/${c.chart.id}.svg`;
    if (c.vega === null) await Deno.remove(file).catch(() => {});
    else await Deno.writeTextFile(file, await renderSvg(c.vega));
  }
  await Deno.writeTextFile(out, page);
  return { html: out, svgDir };
}

function bandChart(
  studies: readonly StudyEntry[],
  width: number,
  id: string,
  series: string,
  title: string,
  yTitle: string,
  log: boolean,
): ChartSpec {
  const rows: Record<string, unknown>[] = [];
  for (const s of studies) {
    for (const p of s.agg.points) {
      const band = p.series.get(series);
      if (!band) continue;
      for (let j = 0; j < band.k.length; j++) {
        const m = band.mean[j];
        if (band.n[j] === 0 || !Number.isFinite(m)) continue;
        if (log && !(m > 0 && band.t[j] > 0)) continue;
        rows.push({ study: s.key, point: p.point.label, t: band.t[j], mean: m });
      }
    }
  }
  const caption = `Ensemble mean over done realisations, one panel per study, shared axes${
    log ? " (log–log; values ≤ 0 are not drawn)" : ""
  }.`;
  if (rows.length === 0) {
    return { id, title, caption, spec: null, emptyReason: `No study recorded the series '${series}'.` };
  }
  const scale = log ? { type: "log", nice: false } : { zero: false };
  const spec = {
    ...facetByStudy(studies, rows),
    spec: {
      width,
      height: 240,
      mark: { type: "line", strokeWidth: 2, tooltip: true },
      encoding: {
        x: { field: "t", type: "quantitative", title: "time t", scale },
        y: {
          field: "mean",
          type: "quantitative",
          title: yTitle,
          scale: log ? { type: "log" } : { zero: true },
        },
        color: { field: "point", type: "nominal", title: "parameter point" },
      },
    },
    resolve: { scale: { x: "shared", y: "shared" } },
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

const ESTIMATES = [
  { analysis: "diffusion", name: "D", label: "answer (fixed cohort)" },
  { analysis: "diffusion", name: "D_lag", label: "lag increments" },
  { analysis: "vinen", name: "D", label: "Vinen fit" },
] as const;

/** Evaporation and losses, shown in the table after the three D estimates. */
const LOSSES = [
  { analysis: "evaporation", name: "evaporated" },
  { analysis: "evaporation", name: "lost_fraction" },
] as const;

/** Data and one facet panel per study (up to three per row), in the order the studies were given. */
function facetByStudy(studies: readonly StudyEntry[], rows: readonly Record<string, unknown>[]) {
  return {
    $schema: SCHEMA,
    data: { values: rows },
    facet: { field: "study", type: "nominal", title: null, sort: studies.map((s) => s.key) },
    columns: Math.min(3, studies.length),
  };
}

function dRows(s: StudyEntry, extra: readonly { analysis: string; name: string }[] = []) {
  return s.agg.points.map((p) => ({
    point: p.point.label,
    estimates: [...ESTIMATES, ...extra].map((e) =>
      s.results.find((r) =>
        r.pointHash === p.point.pointHash && r.analysis === e.analysis && r.name === e.name
      )
    ),
  }));
}

function dChart(studies: readonly StudyEntry[], width: number): ChartSpec {
  const id = "compare-d";
  const title = "D/κ per parameter point";
  const rows: Record<string, unknown>[] = [];
  for (const s of studies) {
    for (const p of dRows(s)) {
      p.estimates.forEach((r, q) => {
        if (r && r.value !== null) {
          rows.push({
            study: s.key,
            point: p.point,
            estimator: ESTIMATES[q].label,
            D: r.value,
            lower: r.lower,
            upper: r.upper,
          });
        }
      });
    }
  }
  const caption =
    "Stored estimates (spindrift analyse) with their bootstrap intervals; one panel per study, " +
    "shared D axis.";
  if (rows.length === 0) {
    return {
      id,
      title,
      caption,
      spec: null,
      emptyReason: "No study has a stored D estimate (run spindrift analyse on each database).",
    };
  }
  const spec = {
    ...facetByStudy(studies, rows),
    spec: {
      width,
      height: 240,
      encoding: {
        x: { field: "point", type: "nominal", title: "parameter point" },
        xOffset: { field: "estimator", type: "nominal" },
        color: { field: "estimator", type: "nominal", title: "estimator" },
      },
      layer: estimateLayers(60),
    },
    resolve: { scale: { x: "independent", y: "shared" } },
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

function cell(v: number | null): string {
  return v === null ? "—" : `<span data-value="${String(v)}">${escapeHtml(formatNumber(v))}</span>`;
}

function comparePage(
  studies: readonly StudyEntry[],
  charts: readonly RenderedChart[],
  o: { runtime: string; generatedAt: string; svgDirName: string },
): string {
  const drawn = charts.filter((c) => c.vega !== null);
  const specs = drawn.map((c) => ({ id: c.chart.id, spec: c.vega }));
  const names = studies.map((s) => s.key).join(" vs ");
  const studyRows = studies.map((s) => {
    const done = s.agg.points.reduce((a, p) => a + p.counts.done, 0);
    return `<tr><th scope="row">${escapeHtml(s.key)}</th><td>${escapeHtml(s.agg.study.description)}</td>` +
      `<td>${escapeHtml(`${s.agg.study.engineId} ${s.agg.study.engineVersion}`)}</td>` +
      `<td class="num">${s.agg.points.length}</td><td class="num">${done}</td>` +
      `<td><code>${escapeHtml(resolve(s.dbPath))}</code><br><code>${
        escapeHtml(s.agg.study.studyHash)
      }</code></td></tr>`;
  }).join("");
  const dTable = studies.flatMap((s) =>
    dRows(s, LOSSES).map((p) =>
      `<tr data-study="${escapeHtml(s.key)}" data-point="${escapeHtml(p.point)}"><td>${
        escapeHtml(s.key)
      }</td>` +
      `<td>${escapeHtml(p.point)}</td>${
        p.estimates.map((r) => {
          if (!r) return "<td>—</td>";
          if (r.value === null) {
            const st = typeof r.detail.status === "string" ? r.detail.status : "not available";
            return `<td class="note">${
              escapeHtml(st === "no-diffusive-regime" ? "no diffusive regime" : st)
            }</td>`;
          }
          return `<td>${cell(r.value)}${
            r.lower !== null && r.upper !== null ? ` [${cell(r.lower)}, ${cell(r.upper)}]` : ""
          }</td>`;
        }).join("")
      }</tr>`
    )
  ).join("");
  const figures = charts.map((c) => {
    const id = escapeHtml(c.chart.id);
    const view = c.vega !== null
      ? `<div class="view" id="view-${id}"></div>`
      : `<div class="empty" id="view-${id}">${escapeHtml(c.chart.emptyReason ?? "No data.")}</div>`;
    const link = c.vega !== null
      ? ` <a class="svg-link" href="${escapeHtml(`${encodeURIComponent(o.svgDirName)}/${id}.svg`)}">SVG</a>`
      : "";
    return `<figure class="chart" id="chart-${id}"><h3>${escapeHtml(c.chart.title)}</h3>${view}` +
      `<figcaption>${escapeHtml(c.chart.caption)}${link}</figcaption></figure>`;
  }).join("\n");
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escapeHtml(`${names} — spindrift comparison`)}</title>
<style>${STYLE}</style>
<script>${ERROR_HOOK}</script>
</head>
<body data-charts="${drawn.length}" data-rendered="0" data-errors="0" data-state="loading">
<header>
<p class="kicker">spindrift comparison</p>
<h1>${escapeHtml(names)}</h1>
<p class="meta">${studies.length} studies · generated ${escapeHtml(o.generatedAt)}</p>
</header>
<div id="page-errors" class="errors" hidden></div>
<main>
<section id="studies">
<h2>Studies</h2>
<div class="scroll"><table><thead><tr><th>study</th><th>question</th><th>engine</th><th class="num">points</th>` +
    `<th class="num">done</th><th>database, study hash</th></tr></thead><tbody>${studyRows}</tbody></table></div>
</section>
<section id="compare-charts">
<h2>Side by side</h2>
${figures}
</section>
<section id="compare-d-table">
<h2>Effective diffusion coefficient ν′/κ = D/κ per point</h2>
<p class="note">Stored ensemble results (run <code>spindrift analyse</code> on a database to fill its rows).</p>
<div class="scroll"><table id="compare-table"><thead><tr><th>study</th><th>point</th><th>D/κ (MSD) [CI]</th>` +
    `<th>D_R/κ (R_rms) [CI]</th><th>D/κ (Vinen) [CI]</th><th>evaporated by the end [CI]</th>` +
    `<th>fraction lost [CI]</th></tr></thead><tbody>${dTable}</tbody></table></div>
</section>
</main>
<footer>Built by spindrift from the study databases alone.</footer>
<script type="application/json" id="spindrift-specs">${jsonForScript(specs)}</script>
<script>${inlineScriptSource(o.runtime)}</script>
<script>${BOOT}</script>
</body>
</html>
`;
}
