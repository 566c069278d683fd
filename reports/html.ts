/**
 * The study report as one self-contained, offline HTML page: title, the study's question, parameters and
 * parameter points, charts (Vega specs compiled in Deno, drawn in the browser by the inlined Vega runtime),
 * scalar summaries, failures, the full study text and provenance.
 *
 * Safety: every piece of user or database text goes through `escapeHtml`; chart data travels as JSON inside a
 * `<script type="application/json">` with `<`, `>`, `&`, U+2028 and U+2029 written as \u escapes; the inlined
 * runtime has `</script` and `<!--` neutralised. So no study text can close a tag or run script.
 *
 * For automated checks the body carries `data-charts` (views to draw), `data-rendered` (views drawn so far),
 * `data-errors` (script errors and console.error calls seen) and `data-state="ready"` once all views are drawn;
 * each chart sits in `<div class="view" id="view-<chart id>">`.
 *
 * @example
 * ```ts
 * const html = renderReportHtml({ agg, charts, vegaRuntime, dbPath: "/runs/film.sqlite",
 *   generatedAt: new Date().toISOString(), svgDirName: "film-report-svg" });
 * await Deno.writeTextFile("film-report.html", html);
 * ```
 */
import type * as vega from "vega";
export { escapeHtml, formatInterval, formatNumber } from "./format.ts";
import type { StudyAggregate } from "./aggregate.ts";
import { escapeHtml, formatInterval, formatNumber } from "./format.ts";
import { dimUnit, type ReportUnits, reportUnits, scalarInfo } from "./quantities.ts";
import { countTotals } from "./summary.ts";
import { pointView } from "./specs.ts";
import type { ChartSpec } from "./specs.ts";

/** A chart with its compiled Vega spec (null when the chart has no data). */
export interface RenderedChart {
  readonly chart: ChartSpec;
  readonly vega: vega.Spec | null;
}

export interface ReportPageInput {
  readonly agg: StudyAggregate;
  readonly charts: readonly RenderedChart[];
  /** Source of `vega.min.js`, inlined into the page. */
  readonly vegaRuntime: string;
  /** Database path shown under provenance. */
  readonly dbPath: string;
  /** ISO time the page was generated. */
  readonly generatedAt: string;
  /**
   * Folder (relative to the page) holding each chart's figure files (`<chart id>.svg`, `.csv` and, when
   * `figureFormats` lists it, `.png`); links are omitted when absent.
   */
  readonly svgDirName?: string;
  /** Figure files written per chart, linked under each chart (default SVG and CSV). */
  readonly figureFormats?: readonly ("svg" | "png" | "csv")[];
  /**
   * The "Answers" section (ensemble analysis: D/κ with intervals, fit window, sensitivity, …) as HTML blocks
   * and charts in page order; omitted → no such section.
   */
  readonly analysis?: readonly PagePart[];
  /**
   * Self-contained sections placed after "Results" (already escaped HTML, each a `<section id=…>`), with a nav
   * link and optional style rules; e.g. the condensate images of field_snapshots_section.ts or a section of
   * numerical checks.
   */
  readonly sections?: readonly ExtraSection[];
  /** The answer-first summary (`summary.ts`, escaped HTML); omitted → the question with the counts only. */
  readonly summary?: string;
  /** The units section (`quantities.ts` `unitsSection`, escaped HTML); omitted → none. */
  readonly unitsHtml?: string;
  /** The study's units, for the unit column of the scalar tables; omitted → read from the study record. */
  readonly units?: ReportUnits;
  /**
   * True when the analysis stores evaporation with bootstrap intervals: the page then shows that number only
   * (one number, one interval) and leaves the Student-t mean of `evaporated_final` out.
   */
  readonly analysisHasEvaporation?: boolean;
  /** Extra provenance lines of the analysis (e.g. where χ₂ came from), as [label, text]. */
  readonly analysisProvenance?: readonly (readonly [string, string])[];
}

/** A section built elsewhere in reports/ and inserted as is. */
export interface ExtraSection {
  readonly id: string;
  readonly title: string;
  readonly html: string;
  readonly style?: string;
}

/** A block of the page: HTML that is already escaped, or a chart. */
export type PagePart = { readonly html: string } | { readonly rendered: RenderedChart };

/** JSON that is safe inside `<script type="application/json">` (and parses back to the same value). */
export function jsonForScript(value: unknown): string {
  return JSON.stringify(value).replace(
    /[<>&\u2028\u2029]/g,
    (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, "0")}`,
  );
}

/**
 * JavaScript source made safe to place between `<script>` tags: `</script` becomes `<\/script` and `<!--`
 * becomes `\x3C!--`; both spellings mean the same inside JavaScript strings, templates and regular expressions.
 */
export function inlineScriptSource(js: string): string {
  return js.replace(/<\/(script)/gi, "<\\/$1").replace(/<!--/g, "\\x3C!--");
}

/** The full report page. */
export function renderReportHtml(input: ReportPageInput): string {
  const { agg } = input;
  const s = agg.study;
  const analysisCharts = (input.analysis ?? []).flatMap((p) => ("rendered" in p ? [p.rendered] : []));
  const drawn = [...analysisCharts, ...input.charts].filter((c) => c.vega !== null);
  const title = `${s.name} — spindrift report`;
  const specs = drawn.map((c) => ({ id: c.chart.id, spec: c.vega }));
  const totals = countTotals(agg);
  const units = input.units ?? reportUnits(s.units);
  const results = input.charts.filter((c) => c.chart.section !== "diagnostics");
  const diagnostics = input.charts.filter((c) => c.chart.section === "diagnostics");
  const fig = (c: RenderedChart) => figure(c, input.svgDirName, input.figureFormats);
  const nav: (readonly [string, string])[] = [
    ["summary", input.summary ? "Summary" : "Question"],
    ...(input.unitsHtml ? [["units", "Units"] as const] : []),
    ...(input.analysis ? [["answers", "Answers"] as const] : []),
    ["results", "Results"],
    ...(input.sections ?? []).map((x) => [x.id, x.title] as const),
    ["diagnostics", "Diagnostics"],
    ["parameters", "Parameters"],
    [
      "failures",
      `Failures${totals.failed + totals.running > 0 ? ` (${totals.failed + totals.running})` : ""}`,
    ],
    ["study-file", "Study file"],
    ["provenance", "Provenance"],
  ];
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="spindrift ${escapeHtml(s.toolVersion)}">
<title>${escapeHtml(title)}</title>
<style>${STYLE}${(input.sections ?? []).map((x) => x.style ?? "").join("")}</style>
<script>${ERROR_HOOK}</script>
</head>
<body data-charts="${drawn.length}" data-rendered="0" data-errors="0" data-state="loading">
<header>
<p class="kicker">spindrift study report</p>
<h1>${escapeHtml(s.name)}</h1>
<p class="meta">revision #${s.id} · engine ${escapeHtml(s.engineId)} ${
    escapeHtml(s.engineVersion)
  } · created ${escapeHtml(s.createdAt)} · report generated ${escapeHtml(input.generatedAt)}</p>
</header>
<nav>${nav.map(([id, t]) => `<a href="#${escapeHtml(id)}">${escapeHtml(t)}</a>`).join(" ")}</nav>
<div id="page-errors" class="errors" hidden></div>
<main>
${input.summary ?? questionOnly(agg, totals)}${input.unitsHtml ?? ""}${
    input.analysis ? answersSection(input.analysis, fig) : ""
  }<section id="results">
<h2>Results</h2>
${notesList(s.notes)}
${results.map(fig).join("\n")}
<h3>Physical quantities per point</h3>
<p class="note">Mean over done realisations with the ${
    pct(agg.level)
  } Student-t confidence interval [low, high] and the number of realisations n.${
    input.analysisHasEvaporation
      ? " The number evaporated is under Answers, with its bootstrap interval (one number, one interval)."
      : ""
  }</p>
${scalarsTable(agg, units, "physics", input.analysisHasEvaporation ? ["evaporated_final"] : [])}
</section>
${(input.sections ?? []).map((x) => x.html).join("\n")}<section id="diagnostics">
<h2>Diagnostics</h2>
<p class="note">How the solver did, apart from the physics: step counts, rejected steps, resolution losses and
the drift of conserved quantities, per point (mean, ${pct(agg.level)} Student-t interval, n).</p>
${diagnostics.map(fig).join("\n")}
${scalarsTable(agg, units, "diagnostic", [])}
</section>
<section id="parameters">
<h2>Parameters</h2>
${settingsTable(agg)}
<h3>Parameter points</h3>
${pointsTable(agg, input.analysisHasEvaporation === true)}
<h3>Engine parameters</h3>
<p class="note">Normalized parameters (defaults filled in). Values that differ between points are listed per point above.</p>
${paramsTable(agg)}
</section>
<section id="failures">
<h2>Failures</h2>
${failuresTable(agg)}
</section>
<section id="study-file">
<h2>Study file</h2>
<p class="note">${s.sourcePath ? `${escapeHtml(s.sourcePath)} — ` : ""}the text exactly as it was run.</p>
<pre class="study-text">${escapeHtml(s.text)}</pre>
</section>
<section id="provenance">
<h2>Provenance</h2>
${provenanceTable(input)}
</section>
</main>
<footer>Built by spindrift from the database alone; rebuilding it from the same database gives the same numbers.</footer>
<script type="application/json" id="spindrift-specs">${jsonForScript(specs)}</script>
<script>${inlineScriptSource(input.vegaRuntime)}</script>
<script>${BOOT}</script>
</body>
</html>
`;
}

/** The top of a page built without a summary: the question and the counts. */
function questionOnly(agg: StudyAggregate, totals: ReturnType<typeof countTotals>): string {
  const s = agg.study;
  const tile = (value: string, label: string, cls = "") =>
    `<div class="tile ${cls}"><span class="v">${escapeHtml(value)}</span><span class="l">${
      escapeHtml(label)
    }</span></div>`;
  return `<section id="summary">
<h2>Question</h2>
<p class="description">${escapeHtml(s.description.trim()) || "<em>(the study gives no description)</em>"}</p>
<div class="tiles">
${tile(String(agg.points.length), agg.points.length === 1 ? "parameter point" : "parameter points")}
${tile(`${totals.done}${totals.planned !== null ? ` / ${totals.planned}` : ""}`, "realisations done")}
${tile(String(totals.failed), "failed", totals.failed > 0 ? "bad" : "")}
${tile(String(totals.running), "unfinished", totals.running > 0 ? "warn" : "")}
${totals.missing ? tile(String(totals.missing), "not run yet", "warn") : ""}
</div>
</section>
`;
}

function settingsTable(agg: StudyAggregate): string {
  const o = agg.overview;
  const rows: [string, string][] = [
    ["engine", `${agg.study.engineId} ${agg.study.engineVersion}`],
    ["realisations per point", o.realisations === null ? "—" : String(o.realisations)],
    ["master seed", o.seed ?? "—"],
  ];
  for (const [k, v] of Object.entries(o.run ?? {})) rows.push([`run.${k}`, formatValue(v)]);
  const obs = o.observables ?? {};
  for (const [k, v] of Object.entries(obs)) {
    if (isRecord(v)) {
      for (const [k2, v2] of Object.entries(v)) rows.push([`observables.${k}.${k2}`, formatValue(v2)]);
    } else rows.push([`observables.${k}`, formatValue(v)]);
  }
  return `<table class="kv"><tbody>${
    rows.map(([k, v]) => `<tr><th scope="row">${escapeHtml(k)}</th><td>${escapeHtml(v)}</td></tr>`).join("")
  }</tbody></table>`;
}

function pointsTable(agg: StudyAggregate, analysisHasEvaporation: boolean): string {
  const names = pointView(agg).names;
  const head = `<tr><th>#</th><th>point</th><th>label</th><th>swept values</th><th class="num">done</th>` +
    `<th class="num">failed</th><th class="num">unfinished</th>${
      analysisHasEvaporation ? "" : "<th>evaporated at end</th>"
    }<th>events (done runs)</th></tr>`;
  const body = agg.points.map((p, i) => {
    const c = p.counts;
    const done = c.planned === null ? String(c.done) : `${c.done} / ${c.planned}`;
    const varied = Object.entries(p.point.varied).map(([k, v]) => `${k} = ${formatValue(v)}`).join("; ") ||
      "—";
    const events = Object.entries(p.events).sort(([a], [b]) =>
      a.localeCompare(b)
    ).map(([k, n]) => `${k} ${n}`)
      .join(" · ") || "—";
    const evap = p.evaporated.source === "none" ? "—" : formatInterval(p.evaporated.interval);
    const extra = c.extra > 0
      ? ` <span class="note">(+${c.extra} stored beyond the plan, not used)</span>`
      : "";
    return `<tr><td>${p.point.index}</td><td>${escapeHtml(names[i])}</td><td>${
      escapeHtml(p.point.label)
    }</td>` +
      `<td>${escapeHtml(varied)}</td><td class="num">${escapeHtml(done)}${extra}</td>` +
      `<td class="num${c.failed ? " bad" : ""}">${c.failed}</td>` +
      `<td class="num${c.running ? " warn" : ""}">${c.running}</td>${
        analysisHasEvaporation ? "" : `<td>${escapeHtml(evap)}</td>`
      }<td>${escapeHtml(events)}</td></tr>`;
  }).join("");
  return `<table><thead>${head}</thead><tbody>${body}</tbody></table>`;
}

function paramsTable(agg: StudyAggregate): string {
  const flat = agg.points.map((p) => flatten(p.point.params));
  const paths = [...new Set(flat.flatMap((f) => [...f.keys()]))];
  if (paths.length === 0) return `<p class="note">No parameters stored.</p>`;
  const rows = paths.map((path) => {
    const values = new Set(flat.map((f) => f.get(path) ?? "(absent)"));
    const v = values.size === 1 ? [...values][0] : "varies — see parameter points";
    return `<tr><th scope="row">${escapeHtml(path)}</th><td${values.size === 1 ? "" : ' class="note"'}>${
      escapeHtml(v)
    }</td></tr>`;
  });
  return `<table class="kv"><tbody>${rows.join("")}</tbody></table>`;
}

function answersSection(parts: readonly PagePart[], fig: (c: RenderedChart) => string): string {
  const body = parts.map((p) => ("rendered" in p ? fig(p.rendered) : p.html)).join("\n");
  return `<section id="answers">
<h2>Answers: effective diffusion coefficient ν′ = D/κ, with the evidence</h2>
${body}
</section>
`;
}

/**
 * A chart's figure box, or one line saying why there is no chart (sections that do not apply are one line,
 * not an empty box).
 */
function figure(
  c: RenderedChart,
  figDirName: string | undefined,
  formats: readonly string[] = ["svg", "csv"],
): string {
  const id = c.chart.id;
  if (c.vega === null) {
    return `<p class="note not-applicable" id="view-${escapeHtml(id)}"><strong>${
      escapeHtml(c.chart.title)
    }:</strong> ${escapeHtml(c.chart.emptyReason ?? "no data.")}</p>`;
  }
  const links = figDirName !== undefined
    ? ` <span class="figure-links">${
      formats.map((f) =>
        `<a class="${f}-link" href="${
          escapeHtml(`${encodeURIComponent(figDirName)}/${encodeURIComponent(id)}.${f}`)
        }">${f === "csv" ? "data (CSV)" : f.toUpperCase()}</a>`
      ).join(" · ")
    }</span>`
    : "";
  return `<figure class="chart" id="chart-${escapeHtml(id)}">
<h3>${escapeHtml(c.chart.title)}</h3>
<div class="view" id="view-${escapeHtml(id)}"></div>
<figcaption>${escapeHtml(c.chart.caption)}${links}</figcaption>
</figure>`;
}

/** Scalars of one kind (physical results or solver diagnostics) per point, with their units. */
function scalarsTable(
  agg: StudyAggregate,
  units: ReportUnits,
  kind: "physics" | "diagnostic",
  leaveOut: readonly string[],
): string {
  const names = [...new Set(agg.points.flatMap((p) => [...p.scalars.keys()]))].sort()
    .filter((n) => scalarInfo(n).kind === kind && !leaveOut.includes(n));
  if (names.length === 0) {
    return `<p class="note">${
      kind === "physics" ? "No physical scalars recorded" : "No solver diagnostics recorded"
    } by done realisations.</p>`;
  }
  const head = `<tr><th>${kind === "physics" ? "quantity" : "diagnostic"}</th><th>unit</th>${
    pointView(agg).names.map((n) => `<th>${escapeHtml(n)}</th>`).join("")
  }</tr>`;
  const body = names.map((n) => {
    const info = scalarInfo(n);
    return `<tr data-scalar="${escapeHtml(n)}"><th scope="row">${escapeHtml(info.label)}<br><code>${
      escapeHtml(n)
    }</code></th><td>${escapeHtml(dimUnit(info.dim, units) || "—")}</td>${
      agg.points.map((p) => {
        const ci = p.scalars.get(n);
        return `<td>${ci ? escapeHtml(formatInterval(ci)) : "—"}</td>`;
      }).join("")
    }</tr>`;
  }).join("");
  return `<table class="scalars" id="${kind === "physics" ? "physics-table" : "diagnostics-table"}"><thead>` +
    `${head}</thead><tbody>${body}</tbody></table>`;
}

function failuresTable(agg: StudyAggregate): string {
  if (agg.failures.length === 0) {
    return `<p class="ok">No failed or unfinished realisations.</p>`;
  }
  const head =
    `<tr><th>point</th><th class="num">realisation</th><th>status</th><th>kind</th><th>message</th>` +
    `<th class="num">t reached</th><th class="num">wall time</th><th>seed</th></tr>`;
  const body = agg.failures.map((f) =>
    `<tr class="${f.status === "failed" ? "bad" : "warn"}"><td>${escapeHtml(f.pointLabel)}</td>` +
    `<td class="num">${f.index}</td><td>${f.status === "running" ? "unfinished" : "failed"}</td>` +
    `<td>${escapeHtml(f.kind ?? "—")}</td><td class="msg">${
      escapeHtml(f.error ?? (f.status === "running" ? "still running, or interrupted by a crash" : "—"))
    }</td>` +
    `<td class="num">${f.simTimeReached === null ? "—" : escapeHtml(formatNumber(f.simTimeReached))}</td>` +
    `<td class="num">${f.wallSeconds === null ? "—" : `${escapeHtml(formatNumber(f.wallSeconds))} s`}</td>` +
    `<td><code>${escapeHtml(f.seed)}</code></td></tr>`
  ).join("");
  return `<table class="failures"><thead>${head}</thead><tbody>${body}</tbody></table>`;
}

function provenanceTable(input: ReportPageInput): string {
  const s = input.agg.study;
  const rows: (readonly [string, string])[] = [
    ["tool version", `spindrift ${s.toolVersion}`],
    ["Deno version", s.denoVersion],
    ["git commit", s.gitCommit ?? "(not recorded)"],
    ["engine", `${s.engineId} ${s.engineVersion}`],
    ["study revision", `#${s.id}`],
    ["study hash", s.studyHash],
    ["study created", s.createdAt],
    ["last run", s.lastRunAt ?? "—"],
    ["study file", s.sourcePath ?? "—"],
    ["database", input.dbPath],
    ["report generated", input.generatedAt],
    ...(input.analysisProvenance ?? []),
  ];
  return `<table class="kv"><tbody>${
    rows.map(([k, v]) =>
      `<tr><th scope="row">${escapeHtml(k)}</th><td><code>${escapeHtml(v)}</code></td></tr>`
    )
      .join("")
  }</tbody></table>`;
}

function formatValue(v: unknown): string {
  if (typeof v === "number") return String(v);
  if (typeof v === "string") return v;
  const json = JSON.stringify(v) ?? String(v);
  return json.length > 240 ? `${json.slice(0, 240)}… (${json.length} characters)` : json;
}

/** Dotted paths of leaves (arrays are leaves) → display string. */
function flatten(value: unknown, prefix = "", out = new Map<string, string>()): Map<string, string> {
  if (isRecord(value)) {
    for (const [k, v] of Object.entries(value)) flatten(v, prefix ? `${prefix}.${k}` : k, out);
  } else if (prefix) {
    out.set(prefix, formatValue(value));
  }
  return out;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

function pct(level: number): string {
  return `${Math.round(level * 1000) / 10} %`;
}

/**
 * Page script (shared with the compare page): records uncaught errors, rejected promises and console.error calls
 * in the page (runs first).
 */
export const ERROR_HOOK = `(function () {
  function note(msg) {
    var b = document.body;
    if (!b) { (window.__spindriftEarly = window.__spindriftEarly || []).push(msg); return; }
    b.setAttribute("data-errors", String(Number(b.getAttribute("data-errors") || "0") + 1));
    var box = document.getElementById("page-errors");
    if (box) { box.hidden = false; var p = document.createElement("p"); p.textContent = "Page error: " + msg; box.appendChild(p); }
  }
  window.__spindriftNote = note;
  window.addEventListener("error", function (e) { note(e.message || String(e.error)); });
  window.addEventListener("unhandledrejection", function (e) { note(String(e.reason && e.reason.message || e.reason)); });
  var ce = console.error;
  console.error = function () { note(Array.prototype.map.call(arguments, String).join(" ")); return ce.apply(console, arguments); };
})();`;

/** Page script (shared with the compare page): draws every view from the inlined specs, counts data-rendered. */
export const BOOT = `(function () {
  var note = window.__spindriftNote;
  (window.__spindriftEarly || []).forEach(note);
  var body = document.body;
  var items = JSON.parse(document.getElementById("spindrift-specs").textContent);
  var rendered = 0;
  items.forEach(function (item) {
    var el = document.getElementById("view-" + item.id);
    try {
      var view = new vega.View(vega.parse(item.spec), { renderer: "svg", container: el, hover: true });
      view.runAsync().then(function () {
        rendered += 1;
        body.setAttribute("data-rendered", String(rendered));
        if (rendered === items.length) { checkOverflow(); body.setAttribute("data-state", "ready"); }
      }, function (e) { note("chart " + item.id + ": " + (e && e.message || e)); });
    } catch (e) {
      note("chart " + item.id + ": " + (e && e.message || e));
    }
  });
  if (items.length === 0) { checkOverflow(); body.setAttribute("data-state", "ready"); }
  // Self-check for automated tests: elements wider than the window, or whose content overflows them.
  function checkOverflow() {
    var width = document.documentElement.clientWidth, bad = [];
    document.querySelectorAll("main *, header *, nav *").forEach(function (el) {
      if (el.closest("details:not([open])") || el.closest("svg")) return;
      var r = el.getBoundingClientRect();
      if (r.width === 0 && r.height === 0) return;
      var col = el.parentElement.closest("main, header, nav").getBoundingClientRect();
      var wide = r.right > Math.min(width, col.right) + 1 || r.left < -1;
      var cut = el.scrollWidth > el.clientWidth + 1 && getComputedStyle(el).overflowX !== "visible";
      var where = el.id ? "#" + el.id : el.tagName.toLowerCase() + "@" + ((el.closest("[id]") || {}).id || "?");
      if (wide || cut) bad.push(where + (wide ? ">page" : ">cut"));
    });
    if (document.documentElement.scrollWidth > width + 1) bad.push("page>window");
    body.setAttribute("data-overflow", String(bad.length));
    body.setAttribute("data-overflow-list", bad.slice(0, 20).join(" "));
  }
})();`;

/** The page style sheet (shared with the compare page). */
export const STYLE = `
:root { --fg: #1d2430; --muted: #5b6576; --line: #d9dee6; --bg: #ffffff; --soft: #f5f7fa; --accent: #2f6fb3;
  --bad: #b3261e; --warn: #9a6700; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--fg); background: var(--bg);
  font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; }
header, nav, main, footer, .errors { max-width: 1080px; margin: 0 auto; padding: 0 24px; }
header { padding-top: 28px; }
.kicker { margin: 0; color: var(--accent); font-weight: 600; letter-spacing: .04em; text-transform: uppercase; font-size: 12px; }
h1 { margin: 4px 0 4px; font-size: 30px; line-height: 1.2; overflow-wrap: anywhere; }
h2 { margin: 36px 0 12px; font-size: 21px; border-bottom: 1px solid var(--line); padding-bottom: 6px; }
h3 { margin: 24px 0 8px; font-size: 16px; }
.meta, .note, figcaption, footer { color: var(--muted); font-size: 13px; }
p, li, dd { overflow-wrap: anywhere; }
nav { position: sticky; top: 0; background: rgba(255,255,255,.95); border-bottom: 1px solid var(--line);
  padding-top: 8px; padding-bottom: 8px; z-index: 2; display: flex; flex-wrap: wrap; gap: 4px 16px; }
nav a { color: var(--accent); text-decoration: none; font-size: 14px; }
nav a:hover { text-decoration: underline; }
.description { white-space: pre-wrap; font-size: 16px; background: var(--soft); border-left: 4px solid var(--accent);
  padding: 12px 16px; margin: 0; overflow-wrap: anywhere; }
.question-label { margin: 16px 0 4px; color: var(--muted); font-size: 12px; font-weight: 600; letter-spacing: .04em;
  text-transform: uppercase; }
.answer-box { border: 1px solid #c9d6e8; background: #f7faff; padding: 4px 16px 14px; margin: 14px 0; border-radius: 8px; }
.answer-box .verdict { font-size: 17px; font-weight: 600; margin: 4px 0 8px; }
.cards { display: grid; grid-template-columns: repeat(auto-fit, minmax(240px, 1fr)); gap: 12px; margin-top: 10px; }
.card { background: #fff; border: 1px solid var(--line); border-top: 5px solid var(--accent); border-radius: 8px;
  padding: 10px 14px; min-width: 0; }
.card .name { font-weight: 600; font-size: 15px; overflow-wrap: anywhere; }
.card .big { font-size: 26px; font-weight: 650; line-height: 1.25; margin: 6px 0 2px; overflow-wrap: anywhere;
  font-variant-numeric: tabular-nums; }
.card .big .sym { font-size: 15px; font-weight: 500; color: var(--muted); }
.card .big .ci { font-size: 17px; font-weight: 500; color: var(--muted); }
.card .big.none { font-size: 20px; color: var(--warn); }
.card .si { font-size: 14px; font-variant-numeric: tabular-nums; overflow-wrap: anywhere; }
.card .lvl, .card .n { display: block; color: var(--muted); font-size: 12px; }
.card .why { margin: 4px 0; font-size: 13px; color: var(--fg); }
.caveats { border-left: 4px solid var(--warn); background: #fffaf0; padding: 2px 16px 6px; margin: 12px 0; }
.caveats ul { margin: 4px 0; padding-left: 20px; }
.caveats li { margin: 4px 0; }
.unfinished { border: 2px solid var(--warn); background: #fff4d6; padding: 10px 16px; border-radius: 8px; margin: 12px 0; }
ul.units { margin: 4px 0; padding-left: 20px; }
.tiles { display: flex; flex-wrap: wrap; gap: 12px; margin-top: 16px; }
.tile { border: 1px solid var(--line); border-radius: 8px; padding: 10px 16px; min-width: 130px; }
.tile .v { display: block; font-size: 24px; font-weight: 650; }
.tile .l { color: var(--muted); font-size: 13px; }
.tile.bad .v, td.bad { color: var(--bad); }
.tile.warn .v, td.warn { color: var(--warn); }
table { border-collapse: collapse; font-size: 14px; width: 100%; }
th, td { text-align: left; vertical-align: top; padding: 5px 8px; border-bottom: 1px solid var(--line);
  overflow-wrap: break-word; }
thead th { background: var(--soft); font-weight: 600; hyphens: auto; }
td.num { white-space: nowrap; }
table.kv th { width: 34%; font-weight: 500; color: var(--muted); }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
tr.bad td:first-child { box-shadow: inset 3px 0 var(--bad); }
tr.warn td:first-child { box-shadow: inset 3px 0 var(--warn); }
td.msg { font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; font-size: 13px;
  overflow-wrap: anywhere; }
figure.chart { margin: 0 0 28px; padding: 12px 16px 14px; border: 1px solid var(--line); border-radius: 8px; }
figure.chart h3 { margin-top: 4px; }
.view { min-height: 60px; }
.view svg { max-width: 100%; height: auto; }
.not-applicable { background: var(--soft); padding: 8px 12px; border-radius: 6px; }
figcaption { margin-top: 8px; }
.figure-links { margin-left: 6px; white-space: nowrap; }
.figure-links a { color: var(--accent); }
details > summary { cursor: pointer; color: var(--accent); }
pre.study-text { background: var(--soft); border: 1px solid var(--line); border-radius: 6px; padding: 12px 14px;
  white-space: pre-wrap; overflow-wrap: anywhere; font-size: 13px; line-height: 1.45; }
code { font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; font-size: 13px; overflow-wrap: anywhere; }
.ok { color: #1a7f37; }
.errors { margin-top: 12px; }
.errors p { color: var(--bad); background: #fdecea; border: 1px solid #f5c2c0; padding: 8px 12px; border-radius: 6px; }
footer { padding-top: 24px; padding-bottom: 32px; }
table.analysis td span[data-role="lower"], table.analysis td span[data-role="upper"] { color: var(--muted); }
td.status .warn { color: var(--warn); font-weight: 600; }
.dk { font-size: 13px; }
.errors-inline { background: #fff8e1; border: 1px solid #f0d48a; padding: 8px 12px; border-radius: 6px; }
@media (max-width: 760px) {
  header, nav, main, footer, .errors { padding: 0 10px; }
  th, td { overflow-wrap: anywhere; padding: 4px 4px; }
  td.num { white-space: normal; }
  table { font-size: 12px; }
  figure.chart { padding: 8px; }
}
@media print { nav { display: none; } figure.chart { break-inside: avoid; } }
`;

/** Notes recorded by the runner (e.g. observables that could not apply to this engine), never silent. */
function notesList(notes: readonly { kind: string; id: string; reason: string }[]): string {
  if (notes.length === 0) return "";
  const items = notes.map((n) =>
    n.kind === "observable-skipped"
      ? `<li>Observable <code>${escapeHtml(n.id)}</code> was not computed: ${escapeHtml(n.reason)}</li>`
      : `<li>${escapeHtml(n.kind)} <code>${escapeHtml(n.id)}</code>: ${escapeHtml(n.reason)}</li>`
  );
  return `<div class="note notes"><p>Notes:</p><ul>${items.join("")}</ul></div>`;
}
