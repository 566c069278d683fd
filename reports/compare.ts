/**
 * The compare page: two or more studies side by side on shared axes, one self-contained offline HTML page
 * (same runtime, safety rules and automation attributes as the study report, see `html.ts`) plus each chart
 * as a figure (SVG and CSV, as for a report).
 *
 * Charts (one panel per study, panels share their axes so curves can be compared by eye; each point keeps the
 * colour it has in its own study's report):
 * - `compare-msd`: ensemble-mean MSD vs time, log–log;
 * - `compare-rms-radius`: main-cluster RMS radius vs time;
 * - `compare-evaporated`: cumulative evaporated objects vs time;
 * - `compare-d`: D/κ per parameter point with the stored intervals (answer, lag increments, Vinen fit);
 *   physical-unit studies are converted with the κ recorded with them.
 * Axes carry the studies' units when the studies share them. Studies in different units (or of very different
 * initial size) get a warning on the page and from `writeComparePage`, since shared axes then compare numbers,
 * not quantities. A table lists the studies (name, question, engine, units, points, realisations, database)
 * and the stored estimates of every point, each number with its full-precision value in `data-value`.
 *
 * @example
 * ```ts
 * const { html, warnings } = await writeComparePage(["a.sqlite", "b.sqlite"], { out: "a-vs-b.html" });
 * ```
 */
import { basename, resolve } from "node:path";
import type { TopLevelSpec } from "vega-lite";
import { type EnsembleResult, readEnsembleResults } from "../store/ensemble.ts";
import { openStoreReadOnly } from "../store/reads.ts";
import { aggregateStudy, type StudyAggregate } from "./aggregate.ts";
import { BOOT, ERROR_HOOK, inlineScriptSource, jsonForScript, type RenderedChart, STYLE } from "./html.ts";
import { escapeHtml, formatNumber } from "./format.ts";
import { writeAtomic, writeFigures } from "./figures.ts";
import {
  axisTitle,
  lengthScale,
  type ReportUnits,
  reportUnits,
  type Scale,
  squaredUnit,
  timeScale,
} from "./quantities.ts";
import { compileChart, readVegaRuntime } from "./render.ts";
import {
  type ChartSpec,
  CONFIG,
  estimateLayers,
  numberFormat,
  type PointView,
  pointView,
  SCHEMA,
} from "./specs.ts";

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
  readonly units: ReportUnits;
  readonly view: PointView;
  /** Colour-scale key of each point: its name, or "name (study)" when another study has a point of that name. */
  readonly colourKeys: readonly string[];
}

/**
 * Writes the compare page for the latest study revision of each database, and the figures folder beside it;
 * returns both paths and the warnings it put on the page (different units or sizes). Throws `StoreReadError`
 * for an unreadable database and `RangeError` for fewer than two databases.
 */
export async function writeComparePage(
  dbPaths: readonly string[],
  opts: CompareOptions = {},
): Promise<{ html: string; figuresDir: string; warnings: string[] }> {
  if (dbPaths.length < 2) {
    throw new RangeError(`compare needs at least two study databases, got ${dbPaths.length}`);
  }
  const loaded: Omit<StudyEntry, "key" | "colourKeys">[] = [];
  for (const path of dbPaths) {
    const db = openStoreReadOnly(path);
    try {
      const agg = aggregateStudy(db, { series: ["msd", "cluster_rms_radius", "evaporated_count"] });
      const results = readEnsembleResults(db, agg.study.id);
      const fallback = results.map((r) => r.detail.kappa).find((k): k is number => typeof k === "number");
      loaded.push({
        dbPath: path,
        agg,
        results,
        units: reportUnits(agg.study.units, fallback),
        view: pointView(agg),
      });
    } finally {
      db.close();
    }
  }
  const names = new Map<string, number>();
  for (const s of loaded) names.set(s.agg.study.name, (names.get(s.agg.study.name) ?? 0) + 1);
  const keys = loaded.map((s, i) =>
    (names.get(s.agg.study.name) ?? 0) > 1
      ? `${s.agg.study.name} (${i + 1}: ${basename(s.dbPath)})`
      : s.agg.study.name
  );
  const pointCount = new Map<string, number>();
  for (const s of loaded) {
    for (const n of new Set(s.view.names)) pointCount.set(n, (pointCount.get(n) ?? 0) + 1);
  }
  const studies: StudyEntry[] = loaded.map((s, i) => ({
    ...s,
    key: keys[i],
    colourKeys: s.view.names.map((n) => ((pointCount.get(n) ?? 0) > 1 ? `${n} (${keys[i]})` : n)),
  }));
  const warnings = unitWarnings(studies);
  const width = opts.panelWidth ?? 300;
  const charts = [
    bandChart(studies, width, "compare-msd", "msd", "Mean-square displacement", "MSD", "length2", true),
    bandChart(
      studies,
      width,
      "compare-rms-radius",
      "cluster_rms_radius",
      "RMS radius of the main cluster",
      "R_rms",
      "length",
      false,
    ),
    bandChart(
      studies,
      width,
      "compare-evaporated",
      "evaporated_count",
      "Evaporated objects",
      "evaporated (cumulative)",
      "count",
      false,
    ),
    dChart(studies, width),
  ];
  const rendered: RenderedChart[] = charts.map((chart) => ({
    chart,
    vega: chart.spec === null ? null : compileChart(chart.spec).vega,
  }));
  const out = opts.out ?? "compare.html";
  const figuresDir = `${out.replace(/\.html?$/i, "")}-figures`;
  const page = comparePage(studies, rendered, warnings, {
    runtime: await readVegaRuntime(),
    generatedAt: opts.generatedAt ?? new Date().toISOString(),
    figDirName: basename(figuresDir),
  });
  await writeFigures(figuresDir, charts);
  await writeAtomic(out, page);
  return { html: out, figuresDir, warnings };
}

/** One line per study: its units. */
function unitsText(u: ReportUnits): string {
  if (u.labels === undefined) return "not recorded";
  return `lengths in ${u.labels.length}, times in ${u.labels.time}${
    u.kappaUnits
      ? " (κ = 1)"
      : u.kappa !== undefined
      ? `, κ = ${formatNumber(u.kappa)} ${u.labels.circulation ?? ""}`
      : ""
  }`;
}

/** Warnings when the studies' numbers are not on the same footing: other units, or clouds of other sizes. */
function unitWarnings(studies: readonly StudyEntry[]): string[] {
  const out: string[] = [];
  const texts = studies.map((s) =>
    `${s.key}: ${s.units.labels ? `${s.units.labels.length}, ${s.units.labels.time}` : "not recorded"}`
  );
  const distinct = new Set(
    studies.map((s) => JSON.stringify([s.units.labels?.length, s.units.labels?.time])),
  );
  if (distinct.size > 1) {
    out.push(
      `The studies are in different units (${
        texts.join("; ")
      }): curves on shared axes compare numbers, not ` +
        "lengths and times. D/κ is dimensionless and is compared directly" +
        (studies.some((s) => !s.units.kappaUnits && s.units.kappa === undefined)
          ? " where κ is known (a physical-unit study without a recorded κ is left out of the D chart)."
          : "."),
    );
  }
  const sizes = studies.map((s) => {
    const v = s.agg.points.map((p) => p.scalars.get("rms_radius_initial")?.mean).filter((x): x is number =>
      typeof x === "number" && x > 0
    );
    return v.length > 0 ? v.reduce((a, b) => a + b, 0) / v.length : null;
  });
  const known = sizes.filter((x): x is number => x !== null);
  if (distinct.size === 1 && known.length >= 2 && Math.max(...known) / Math.min(...known) > 2) {
    const lu = studies[0].units.labels?.length ?? "";
    out.push(
      `The clouds start at different sizes (initial RMS radius ${
        studies.map((s, i) =>
          `${s.key}: ${sizes[i] === null ? "—" : formatNumber(sizes[i]!)}${lu ? ` ${lu}` : ""}`
        )
          .join("; ")
      }): the same time and length axes put them at different stages of their spreading; compare in units of ` +
        "each cloud's size, or compare D/κ.",
    );
  }
  return out;
}

/** Shared axis scales and titles when the studies share units; otherwise the studies' own numbers. */
function sharedAxes(
  studies: readonly StudyEntry[],
  tMax: number,
  yMax: number,
  dim: "length" | "length2" | "count",
): { t: Scale; y: Scale; tTitle: string; yUnit: string; same: boolean } {
  const same =
    new Set(studies.map((s) => JSON.stringify([s.units.labels?.length, s.units.labels?.time]))).size === 1;
  const u = studies[0].units;
  if (!same) {
    return {
      t: { factor: 1, unit: "" },
      y: { factor: 1, unit: "" },
      tTitle: "time t (each study's units)",
      yUnit: "each study's units",
      same,
    };
  }
  const t = timeScale(u, tMax);
  let y: Scale = { factor: 1, unit: "" };
  if (dim === "length") y = lengthScale(u, yMax);
  if (dim === "length2") {
    const l = lengthScale(u, Math.sqrt(yMax));
    y = { factor: l.factor * l.factor, unit: squaredUnit(l.unit) };
  }
  return { t, y, tTitle: axisTitle("time t", t.unit), yUnit: y.unit, same };
}

/** The colour encoding of the compare charts: each point in its own report's colour. */
function colourEncoding(studies: readonly StudyEntry[]) {
  const domain = studies.flatMap((s) => s.colourKeys);
  const range = studies.flatMap((s) => s.view.colours);
  return {
    field: "point",
    type: "nominal" as const,
    title: "parameter point",
    scale: { domain, range },
    legend: { symbolType: "stroke", symbolStrokeWidth: 3, columns: domain.length > 6 ? 2 : 1 },
  };
}

function bandChart(
  studies: readonly StudyEntry[],
  width: number,
  id: string,
  series: string,
  title: string,
  y: string,
  dim: "length" | "length2" | "count",
  log: boolean,
): ChartSpec {
  const rows: { study: string; point: string; t: number; mean: number }[] = [];
  for (const s of studies) {
    s.agg.points.forEach((p, i) => {
      const band = p.series.get(series);
      if (!band) return;
      for (let j = 0; j < band.k.length; j++) {
        const m = band.mean[j];
        if (band.n[j] === 0 || !Number.isFinite(m)) continue;
        if (log && !(m > 0 && band.t[j] > 0)) continue;
        rows.push({ study: s.key, point: s.colourKeys[i], t: band.t[j], mean: m });
      }
    });
  }
  const caption = `Ensemble mean over done realisations, one panel per study, shared axes${
    log ? " (log–log; values ≤ 0 are not drawn)" : ""
  }; each point in the colour it has in its study's report.`;
  if (rows.length === 0) {
    return { id, title, caption, spec: null, emptyReason: `No study recorded the series '${series}'.` };
  }
  const ax = sharedAxes(
    studies,
    Math.max(...rows.map((r) => r.t)),
    Math.max(...rows.map((r) => Math.abs(r.mean))),
    dim,
  );
  const shown = rows.map((r) => ({ ...r, t: r.t * ax.t.factor, mean: r.mean * ax.y.factor }));
  const scale = log ? { type: "log", nice: false } : { zero: false };
  const yTitle = dim === "count" ? y : axisTitle(y, ax.yUnit || (dim === "length" ? "length" : "length²"));
  const spec = {
    $schema: SCHEMA,
    data: { name: "ensemble means", values: shown },
    facet: { field: "study", type: "nominal", title: null, sort: studies.map((s) => s.key) },
    columns: Math.min(3, studies.length),
    spec: {
      width,
      height: 240,
      mark: { type: "line", strokeWidth: 2, tooltip: true },
      encoding: {
        x: { field: "t", type: "quantitative", title: ax.tTitle, scale },
        y: {
          field: "mean",
          type: "quantitative",
          title: yTitle,
          scale: log ? { type: "log" } : { zero: true },
          axis: numberFormat(Math.max(...shown.map((r) => Math.abs(r.mean)))),
        },
        color: colourEncoding(studies),
      },
    },
    // Studies in different units get their own axes: a shared axis would only compare numbers.
    resolve: { scale: ax.same ? { x: "shared", y: "shared" } : { x: "independent", y: "independent" } },
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return {
    id,
    title,
    caption: ax.same
      ? caption
      : caption.replace("shared axes", "each on its own axes (the studies' units differ)"),
    spec,
    emptyReason: null,
  };
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

function dRows(s: StudyEntry, extra: readonly { analysis: string; name: string }[] = []) {
  return s.agg.points.map((p, i) => ({
    label: p.point.label,
    name: s.view.names[i],
    colourKey: s.colourKeys[i],
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
  const left: string[] = [];
  for (const s of studies) {
    const k = s.units.kappa;
    for (const p of dRows(s)) {
      p.estimates.forEach((r, q) => {
        if (!r || r.value === null) return;
        if (k === undefined) {
          if (!left.includes(s.key)) left.push(s.key);
          return;
        }
        rows.push({
          study: s.key,
          point: p.colourKey,
          estimator: ESTIMATES[q].label,
          D: r.value / k,
          lower: r.lower === null ? null : r.lower / k,
          upper: r.upper === null ? null : r.upper / k,
        });
      });
    }
  }
  const caption =
    "Stored estimates (spindrift analyse) with their bootstrap intervals, as D/κ (physical-unit " +
    "studies divided by their recorded κ); one panel per study, shared D/κ axis." +
    (left.length > 0 ? ` Left out (κ not recorded): ${left.join(", ")}.` : "");
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
    $schema: SCHEMA,
    data: { name: "estimates", values: rows },
    facet: { field: "study", type: "nominal", title: null, sort: studies.map((s) => s.key) },
    columns: Math.min(3, studies.length),
    spec: {
      width,
      height: 240,
      encoding: {
        x: { field: "point", type: "nominal", title: "parameter point", axis: { labelAngle: -30 } },
        xOffset: { field: "estimator", type: "nominal" },
        color: { ...colourEncoding(studies), legend: null },
        shape: { field: "estimator", type: "nominal", title: "estimator" },
      },
      layer: estimateLayers(60, undefined, "D/κ"),
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
  warnings: readonly string[],
  o: { runtime: string; generatedAt: string; figDirName: string },
): string {
  const drawn = charts.filter((c) => c.vega !== null);
  const specs = drawn.map((c) => ({ id: c.chart.id, spec: c.vega }));
  const names = studies.map((s) => s.key).join(" vs ");
  const studyRows = studies.map((s) => {
    const done = s.agg.points.reduce((a, p) => a + p.counts.done, 0);
    return `<tr><th scope="row">${escapeHtml(s.key)}</th><td>${escapeHtml(s.agg.study.description)}</td>` +
      `<td>${escapeHtml(`${s.agg.study.engineId} ${s.agg.study.engineVersion}`)}</td>` +
      `<td>${escapeHtml(unitsText(s.units))}</td>` +
      `<td class="num">${s.agg.points.length}</td><td class="num">${done}</td>` +
      `<td><code>${escapeHtml(resolve(s.dbPath))}</code><br><code>${
        escapeHtml(s.agg.study.studyHash)
      }</code></td></tr>`;
  }).join("");
  const dTable = studies.flatMap((s) =>
    dRows(s, LOSSES).map((p) =>
      `<tr data-study="${escapeHtml(s.key)}" data-point="${escapeHtml(p.label)}"><td>${
        escapeHtml(s.key)
      }</td>` +
      `<td>${escapeHtml(p.name)}</td>${
        p.estimates.map((r, q) => {
          if (!r) return "<td>—</td>";
          if (r.value === null) {
            const st = typeof r.detail.status === "string" ? r.detail.status : "not available";
            return `<td class="note">${
              escapeHtml(st === "no-diffusive-regime" ? "no diffusive regime" : st)
            }</td>`;
          }
          const ci = r.lower !== null && r.upper !== null ? ` [${cell(r.lower)}, ${cell(r.upper)}]` : "";
          const isD = q < ESTIMATES.length;
          const k = s.units.kappa;
          const dk = isD && !s.units.kappaUnits
            ? `<br><span class="note">${
              k === undefined
                ? "D/κ: κ not recorded"
                : `D/κ = ${formatNumber(r.value / k)}${
                  r.lower !== null && r.upper !== null
                    ? ` [${formatNumber(r.lower / k)}, ${formatNumber(r.upper / k)}]`
                    : ""
                }`
            }</span>`
            : "";
          return `<td>${cell(r.value)}${ci}${
            isD && !s.units.kappaUnits ? ` ${escapeHtml(s.units.dUnit ?? "")}` : ""
          }${dk}</td>`;
        }).join("")
      }</tr>`
    )
  ).join("");
  const figures = charts.map((c) => {
    const id = escapeHtml(c.chart.id);
    if (c.vega === null) {
      return `<p class="note not-applicable" id="view-${id}"><strong>${escapeHtml(c.chart.title)}:</strong> ${
        escapeHtml(c.chart.emptyReason ?? "no data.")
      }</p>`;
    }
    const links = ["svg", "csv"].map((f) =>
      `<a class="${f}-link" href="${escapeHtml(`${encodeURIComponent(o.figDirName)}/${id}.${f}`)}">${
        f === "csv" ? "data (CSV)" : "SVG"
      }</a>`
    ).join(" · ");
    return `<figure class="chart" id="chart-${id}"><h3>${escapeHtml(c.chart.title)}</h3>` +
      `<div class="view" id="view-${id}"></div><figcaption>${escapeHtml(c.chart.caption)} ` +
      `<span class="figure-links">${links}</span></figcaption></figure>`;
  }).join("\n");
  const warningBox = warnings.length > 0
    ? `<div class="caveats" id="compare-warnings"><p class="question-label">Read with care</p><ul>${
      warnings.map((w) => `<li>${escapeHtml(w)}</li>`).join("")
    }</ul></div>`
    : "";
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
${warningBox}
<table><thead><tr><th>study</th><th>question</th><th>engine</th><th>units</th><th class="num">points</th>` +
    `<th class="num">done</th><th>database, study hash</th></tr></thead><tbody>${studyRows}</tbody></table>
</section>
<section id="compare-charts">
<h2>Side by side</h2>
${figures}
</section>
<section id="compare-d-table">
<h2>Effective diffusion coefficient ν′ = D/κ per point</h2>
<p class="note">Stored ensemble results (run <code>spindrift analyse</code> on a database to fill its rows), in each
study's units: D/κ for κ-unit studies; for physical-unit studies D in their unit with D/κ below it. Evaporation:
objects evaporated by the end; lost: the fraction of vortices (2D) or line length (3D) gone by the end.</p>
<table id="compare-table"><thead><tr><th>study</th><th>point</th><th>answer D (fixed cohort) [CI]</th>` +
    `<th>lag increments D [CI]</th><th>Vinen fit D [CI]</th><th>evaporated by the end [CI]</th>` +
    `<th>fraction lost [CI]</th></tr></thead><tbody>${dTable}</tbody></table>
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
