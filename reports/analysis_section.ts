/**
 * The report's "Answers" section, built from the stored ensemble results (`ensemble_results`, written by
 * `spindrift analyse`): first the study's question answered (differences and trend of D between points), then
 * per point the answer D/κ with its interval or "no diffusive regime" with the reasons, the three estimators'
 * exponent evidence and values side by side, D versus the swept parameter, the MSD on log–log axes with guide
 * lines and the window, the local slope α(t), the lag estimator's D(τ), the threshold-sensitivity table, the
 * Vinen fit against the measured profiles with its goodness of fit and where χ₂ came from, and the velocity
 * correlations.
 *
 * Every number shown comes from a stored row: table cells carry the stored value in `data-value` (full
 * precision) and show it with `formatNumber`, so a test can compare the page with the database.
 *
 * @example
 * ```ts
 * const section = buildAnalysisSection(agg, readEnsembleResults(db, agg.study.id), { units });
 * // section.parts: HTML blocks and charts in page order; section.charts: the chart specs (for SVG export)
 * ```
 */
import type { TopLevelSpec } from "vega-lite";
import type { EnsembleResult } from "../store/ensemble.ts";
import type { StudyAggregate } from "./aggregate.ts";
import { escapeHtml, formatNumber } from "./html.ts";
import { type ChartOptions, type ChartSpec, CONFIG, DECADE_LABELS, estimateLayers, SCHEMA } from "./specs.ts";
import { diffusionUnit } from "../engines/units.ts";

/** A piece of the section: HTML (already escaped) or a chart. */
export type AnalysisPart = { readonly html: string } | { readonly chart: ChartSpec };

export interface AnalysisSection {
  readonly parts: readonly AnalysisPart[];
  /** The charts among the parts, in order. */
  readonly charts: readonly ChartSpec[];
  /** True when the database holds ensemble results for this study revision. */
  readonly present: boolean;
  /** The answer in brief for the top of the page (escaped HTML; empty without stored results). */
  readonly headline: string;
  /** Lines for the page's provenance table: when the analysis ran, its seeds, where χ₂ came from. */
  readonly provenance: readonly (readonly [string, string])[];
}

type Detail = Readonly<Record<string, unknown>>;

interface PointRows {
  readonly label: string;
  readonly key: string;
  readonly index: number;
  readonly varied: Readonly<Record<string, unknown>>;
  readonly done: number;
  readonly rows: ReadonlyMap<string, EnsembleResult>;
}

const ESTIMATORS = [
  { analysis: "diffusion", name: "D", label: "answer (fixed cohort)" },
  { analysis: "diffusion", name: "D_origin", label: "survivor average from t₀" },
  { analysis: "diffusion", name: "D_lag", label: "lag increments" },
  { analysis: "diffusion", name: "D_R", label: "cohort spread (D_R)" },
  { analysis: "vinen", name: "D", label: "Vinen-equation fit" },
] as const;

/**
 * Builds the section. Without stored results it is a single note telling the user to run
 * `spindrift analyse`.
 */
export function buildAnalysisSection(
  agg: StudyAggregate,
  results: readonly EnsembleResult[],
  opts: ChartOptions & { readonly dbPath?: string } = {},
): AnalysisSection {
  if (results.length === 0) {
    const cmd = `spindrift analyse ${opts.dbPath ?? "DATABASE"}`;
    return {
      present: false,
      headline: "",
      provenance: [],
      charts: [],
      parts: [{
        html: `<p class="note" id="analysis-missing">No ensemble analysis is stored for this study yet, so ` +
          `D/κ, its confidence interval and the fit window are not shown. Run <code>${
            escapeHtml(cmd)
          }</code> (it reads the stored realisations only, nothing is rerun) and write the report again.</p>`,
      }],
    };
  }
  const labels = agg.points.map((p) => p.point.label);
  const unique = new Set(labels).size === labels.length;
  const points: PointRows[] = agg.points.map((p) => {
    const rows = new Map<string, EnsembleResult>();
    for (const r of results) if (r.pointHash === p.point.pointHash) rows.set(`${r.analysis}/${r.name}`, r);
    return {
      label: p.point.label,
      key: unique ? p.point.label : `P${p.point.index}: ${p.point.label}`,
      index: p.point.index,
      varied: p.point.varied,
      done: p.counts.done,
      rows,
    };
  });
  const ctx: Ctx = { points, opts, width: opts.width ?? 640, level: levelOf(points) };
  const charts = [
    dVsParameterChart(ctx),
    msdFitChart(ctx),
    localSlopeChart(ctx),
    lagChart(ctx),
    vinenChart(ctx),
    corrChart(ctx),
  ];
  const [dChart, msdChart, slopeChart, tauChart, vChart, cChart] = charts;
  const parts: AnalysisPart[] = [
    { html: staleNote(ctx) + questionBlock(ctx) + intro(ctx) + diffusionTable(ctx) + evidenceTable(ctx) },
    { chart: dChart },
    { chart: msdChart },
    { chart: slopeChart },
    { chart: tauChart },
    { html: sensitivityTable(ctx) },
    { html: evaporationTable(ctx) },
    { html: vinenTable(ctx) },
    { chart: vChart },
    { chart: cChart },
  ];
  return { present: true, parts, charts, headline: headline(ctx), provenance: provenance(ctx) };
}

interface Ctx {
  readonly points: readonly PointRows[];
  readonly opts: ChartOptions;
  readonly width: number;
  readonly level: number;
}

function levelOf(points: readonly PointRows[]): number {
  for (const p of points) {
    const l = p.rows.get("diffusion/D")?.detail.level;
    if (typeof l === "number") return l;
  }
  return 0.95;
}

function pct(level: number): string {
  return `${Math.round(level * 1000) / 10} %`;
}

function str(v: unknown): string | null {
  return typeof v === "string" ? v : null;
}

function num(v: unknown): number | null {
  return typeof v === "number" && Number.isFinite(v) ? v : null;
}

function rec(v: unknown): Detail | null {
  return typeof v === "object" && v !== null && !Array.isArray(v) ? v as Detail : null;
}

function arr(v: unknown): unknown[] {
  return Array.isArray(v) ? v : [];
}

/** A table cell showing a stored number; `data-value` holds it at full precision. */
function numCell(v: number | null, cls = "num"): string {
  if (v === null) return `<td class="${cls}">—</td>`;
  return `<td class="${cls}" data-value="${String(v)}">${escapeHtml(formatNumber(v))}</td>`;
}

/** "0.2229 [0.1941, 0.2694]" with each number in its own data-bearing span. */
function estimateCell(r: EnsembleResult | undefined, field: string): string {
  if (r === undefined) return `<td>—</td>`;
  if (r.value === null) {
    const status = str(r.detail.status) ?? "not available";
    const reason = str(r.detail.reason);
    const text = status === "no-diffusive-regime" ? "no diffusive regime" : status;
    return `<td class="status" data-field="${field}" data-status="${escapeHtml(status)}"><span class="warn">${
      escapeHtml(text)
    }</span>${reason ? `<br><span class="note">${escapeHtml(reason)}</span>` : ""}</td>`;
  }
  const span = (role: string, v: number) =>
    `<span data-role="${role}" data-value="${String(v)}">${escapeHtml(formatNumber(v))}</span>`;
  const ci = r.lower !== null && r.upper !== null
    ? ` [${span("lower", r.lower)}, ${span("upper", r.upper)}]`
    : ` <span class="note">(no interval)</span>`;
  return `<td data-field="${field}">${span("value", r.value)}${ci}</td>`;
}

function staleNote(ctx: Ctx): string {
  const stale = ctx.points.filter((p) => {
    const n = num(p.rows.get("diffusion/D")?.detail.realisations);
    return n !== null && n !== p.done;
  });
  if (stale.length === 0) return "";
  return `<p class="errors-inline warn" id="analysis-stale">The analysis is out of date for ${
    stale.map((p) => escapeHtml(p.label)).join(", ")
  }: it used a different number of done realisations than the database now holds. Run ` +
    `<code>spindrift analyse</code> again.</p>`;
}

/** Provenance of the stored analysis: when it ran, its seed base and bootstrap size, where χ₂ came from. */
function provenance(ctx: Ctx): (readonly [string, string])[] {
  const d = ctx.points.map((p) => p.rows.get("diffusion/D")).find((r) => r !== undefined);
  const v = ctx.points.map((p) => p.rows.get("vinen/D")).find((r) => r !== undefined);
  const out: [string, string][] = [];
  if (d) {
    out.push(["analysis computed", d.computedAt]);
    const seed = str(d.detail.seed);
    if (seed) {
      out.push([
        "analysis seeds",
        `${seed.replace(/\/[^/]+\/diffusion$/, "")}/<point hash>/<analysis>, B = ${
          num(d.detail.replicates) ?? "—"
        }`,
      ]);
    }
  }
  const src = rec(v?.detail.chi2Source);
  if (src && str(src.kind) === "decay-study") {
    const ci = arr(src.interval);
    out.push([
      "χ₂ of the Vinen fit",
      `${num(src.chi2)?.toPrecision(4) ?? "—"}${
        typeof ci[0] === "number" && typeof ci[1] === "number"
          ? ` [${ci[0].toPrecision(3)}, ${ci[1].toPrecision(3)}]`
          : ""
      } from decay study ${str(src.studyName) ?? "?"} (study hash ${str(src.studyHash) ?? "?"}), database ${
        str(src.path) ?? "?"
      }, ${num(src.realisations) ?? "?"} realisations, 1/L fitted for t ≥ ${num(src.fromTime) ?? "?"}`,
    ]);
  } else if (v) {
    out.push(["χ₂ of the Vinen fit", str(v.detail.sourceText) ?? "—"]);
  }
  return out;
}

/** The answer in brief, for the top of the page: the question's verdict and each point's D or why none. */
function headline(ctx: Ctx): string {
  const verdict = ctx.points.map((p) => p.rows.get("question/verdict")).find((r) => r !== undefined);
  const lines = arr(verdict?.detail.lines).filter((l): l is string => typeof l === "string");
  const items = ctx.points.map((p) => {
    const d = p.rows.get("diffusion/D");
    if (!d) return "";
    const text = d.value !== null
      ? `ν′ = D/κ = ${formatNumber(d.value)}${
        d.lower !== null && d.upper !== null ? ` [${formatNumber(d.lower)}, ${formatNumber(d.upper)}]` : ""
      } (${pct(ctx.level)} interval)`
      : `${
        str(d.detail.status) === "no-diffusive-regime" ? "no diffusive regime" : str(d.detail.status) ?? "—"
      }${str(d.detail.reason) ? `: ${str(d.detail.reason)}` : ""}`;
    return `<li data-point="${escapeHtml(p.label)}"><strong>${escapeHtml(p.label)}</strong>: ${
      escapeHtml(text)
    }</li>`;
  }).join("");
  return `<div class="answer-box" id="answer-headline"><p><strong>Answer</strong> (from <code>spindrift ` +
    `analyse</code>; the evidence is under <a href="#answers">Answers</a>)</p>${
      lines.map((l) => `<p class="answer">${escapeHtml(l)}</p>`).join("")
    }<ul>${items}</ul></div>`;
}

/** The study's question answered, first (stored `question/verdict` lines, differences and trend). */
function questionBlock(ctx: Ctx): string {
  const verdict = ctx.points.map((p) => p.rows.get("question/verdict")).find((r) => r !== undefined);
  if (!verdict) return "";
  const lines = arr(verdict.detail.lines).filter((l): l is string => typeof l === "string");
  const diffs = ctx.points.filter((p) => p.rows.has("question/difference"));
  const trend = ctx.points.map((p) => p.rows.get("question/trend_slope")).find((r) => r !== undefined);
  let table = "";
  if (diffs.length > 0) {
    const head = `<tr><th>point</th><th>D − D(base) [${
      pct(ctx.level)
    } CI]</th><th>D / D(base) [CI]</th></tr>`;
    const body = diffs.map((p) =>
      `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.label)}</td>` +
      estimateCell(p.rows.get("question/difference"), "difference") +
      estimateCell(p.rows.get("question/ratio"), "ratio") + `</tr>`
    ).join("");
    const base = str(rec(diffs[0].rows.get("question/difference")?.detail.base)?.label);
    table =
      `<p class="note">Base: ${
        escapeHtml(base ?? "the first point")
      }. Intervals: bootstrap of each point's ` +
      `realisations separately (the points are independent), window fixed as for the point's own interval.</p>` +
      `<div class="scroll"><table class="analysis" id="question-table"><thead>${head}</thead><tbody>${body}` +
      `</tbody></table></div>`;
  }
  const trendText = trend
    ? `<p class="note" id="question-trend">Trend: weighted least squares of D against ${
      escapeHtml(str(trend.detail.parameter) ?? "the swept parameter")
    } (weights 1/se²), slope <span data-role="value" data-value="${String(trend.value)}">${
      escapeHtml(formatNumber(trend.value ?? Number.NaN))
    }</span>${
      trend.lower !== null && trend.upper !== null
        ? ` [${formatNumber(trend.lower)}, ${formatNumber(trend.upper)}]`
        : ""
    } per unit.</p>`
    : "";
  return `<div id="question-answered"><h3>The question answered</h3>${
    lines.map((l) => `<p class="answer">${escapeHtml(l)}</p>`).join("")
  }${table}${trendText}</div>`;
}

function intro(ctx: Ctx): string {
  const first = ctx.points.find((p) => p.rows.has("diffusion/D"))?.rows.get("diffusion/D");
  const d = first?.detail ?? {};
  const B = num(d.replicates);
  const computed = first?.computedAt ?? "";
  const units = ctx.opts.units;
  const rule = str(d.rule);
  return `<p class="note">D/κ (ν′) of the main cluster from three estimators of the mean-square displacement, ` +
    `each from pairwise relative displacements (the cluster's drift cancels; no (1 − 1/N) bias): the survivor ` +
    `average from t₀, a fixed cohort (objects in the main cluster throughout the window, displacements from ` +
    `t₁) and lag increments from many start times, D(τ) = MSD(τ)/(2dτ). The answer is the cohort's D, given ` +
    `only when the evidence agrees: ${escapeHtml(rule ?? "")}. ${
      pct(ctx.level)
    } intervals by bootstrap over ` +
    `realisations${
      B !== null ? ` (B = ${B})` : ""
    } with the window fixed; the window's support (share of replicates that find one) is shown beside it. ` +
    `D is in length²/time of the study's units${
      units ? ` (${escapeHtml(units.length)}²/(${escapeHtml(units.time)}))` : ""
    }, ${
      diffusionUnit(units).unit === null
        ? "i.e. D/κ, since time is measured in ℓ²/κ"
        : `i.e. in ${escapeHtml(diffusionUnit(units).unit!)}: divide by κ for D/κ`
    }. Computed ${escapeHtml(computed)}.</p>`;
}

/** The fit's advice (few realisations, a marginal regime), one line each. */
function warningNotes(warnings: unknown): string {
  return arr(warnings).filter((w): w is string => typeof w === "string")
    .map((w) => `<br><span class="fit-warning">warning: ${escapeHtml(w)}</span>`).join("");
}

/** The answer cell: the value with its interval, or "no diffusive regime" with every reason. */
function answerCell(r: EnsembleResult | undefined): string {
  if (r === undefined || r.value !== null) return estimateCell(r, "diffusion-D");
  const status = str(r.detail.status) ?? "not available";
  const reasons = arr(r.detail.reasons).filter((x): x is string => typeof x === "string");
  const text = status === "no-diffusive-regime" ? "no diffusive regime" : status;
  return `<td class="status" data-field="diffusion-D" data-status="${
    escapeHtml(status)
  }"><span class="warn">${escapeHtml(text)}</span>${
    reasons.map((x) => `<br><span class="note reason">${escapeHtml(x)}</span>`).join("")
  }</td>`;
}

function diffusionTable(ctx: Ctx): string {
  const head =
    `<tr><th>point</th><th class="num">n</th><th>${
      escapeHtml(diffusionUnit(ctx.opts.units).header)
    }, the answer [${pct(ctx.level)} CI]</th>` +
    `<th class="num">τ_c</th><th class="num">window t₁</th><th class="num">window t₂</th>` +
    `<th class="num">support</th><th class="num">loss in window</th><th>interval, seed</th></tr>`;
  const body = ctx.points.map((p) => {
    const d = p.rows.get("diffusion/D");
    const det = d?.detail ?? {};
    const seed = str(det.seed);
    const method = str(det.interval);
    return `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.label)}</td>` +
      `${numCell(num(det.realisations))}` + answerCell(d) +
      numCell(p.rows.get("diffusion/tau_c")?.value ?? null) +
      numCell(p.rows.get("diffusion/window_start")?.value ?? null) +
      numCell(p.rows.get("diffusion/window_end")?.value ?? null) +
      numCell(p.rows.get("diffusion/support")?.value ?? null) +
      numCell(p.rows.get("diffusion/loss_in_window")?.value ?? null) +
      `<td class="note">${escapeHtml(method ?? "—")}${
        num(det.replicates) ? `, B = ${num(det.replicates)}` : ""
      }${warningNotes(det.warnings)}${
        seed
          ? `<br><code class="seed" title="${escapeHtml(seed)}" data-seed="${escapeHtml(seed)}">${
            escapeHtml(seed.length > 20 ? `${seed.slice(0, 8)}…${seed.slice(-12)}` : seed)
          }</code>`
          : ""
      }</td></tr>`;
  }).join("");
  return `<div class="scroll"><table class="analysis" id="diffusion-table"><thead>${head}</thead><tbody>${body}` +
    `</tbody></table></div>`;
}

const EVIDENCE = [
  { name: "D_origin", label: "survivor average from t₀", x: "t" },
  { name: "D_cohort", label: "fixed cohort", x: "s = t − t₁" },
  { name: "D_lag", label: "lag increments", x: "τ" },
] as const;

/** Per point and estimator: the window-mean exponent with its interval, pass/fail, and the fitted D. */
function evidenceTable(ctx: Ctx): string {
  const head = `<tr><th>point</th><th>estimator</th><th>exponent over its range [${pct(ctx.level)} CI]</th>` +
    `<th>range</th><th>verdict</th><th>D/κ [CI]</th></tr>`;
  const body = ctx.points.flatMap((p) =>
    EVIDENCE.map((e) => {
      const r = p.rows.get(`diffusion/${e.name}`);
      const ex = rec(r?.detail.exponent);
      if (!r || !ex) return "";
      const v = num(ex.value), lo = num(ex.lower), hi = num(ex.upper);
      const pass = ex.pass === true;
      const fitted = rec(r.detail.fitted);
      const dCell = r.value !== null
        ? estimateCell(r, `evidence-${e.name}`)
        : `<td class="note">slope ${
          formatNumber(num(fitted?.D) ?? Number.NaN)
        } (not a diffusion coefficient)</td>`;
      return `<tr data-point="${escapeHtml(p.label)}" data-estimator="${e.name}"><td>${
        escapeHtml(p.label)
      }</td>` +
        `<td>${escapeHtml(e.label)}</td><td data-value="${v ?? ""}">${
          v === null ? "—" : escapeHtml(formatNumber(v))
        }${lo !== null && hi !== null ? ` [${formatNumber(lo)}, ${formatNumber(hi)}]` : ""}</td>` +
        `<td>${escapeHtml(e.x)} = ${formatNumber(num(ex.from) ?? Number.NaN)}–${
          formatNumber(num(ex.to) ?? Number.NaN)
        }</td><td class="${pass ? "" : "warn"}">${
          pass ? "consistent with diffusion" : escapeHtml(str(ex.reason) ?? "fails")
        }</td>${dCell}</tr>`;
    })
  ).join("");
  if (body === "") return "";
  return `<h3>Evidence for a diffusive regime</h3><p class="note">Diffusion has exponent 1 for every estimator; ` +
    `accepted [0.85, 1.15] for the window mean, and at each point of the log grid the bootstrap interval of the ` +
    `local exponent must reach into that band. Where the regime is not declared, the fitted slopes are shown ` +
    `for reference only.</p><div class="scroll"><table class="analysis" id="evidence-table"><thead>${head}` +
    `</thead><tbody>${body}</tbody></table></div>`;
}

function sensitivityTable(ctx: Ctx): string {
  const names = [
    ...new Set(
      ctx.points.flatMap((p) =>
        [...p.rows.values()].filter((r) => r.analysis === "sensitivity").map((r) => r.name)
      ),
    ),
  ];
  const title = `<h3>Sensitivity of D to the classification thresholds</h3>`;
  if (names.length === 0) return title + `<p class="note">No sensitivity rows stored.</p>`;
  const order = (n: string) => (n === "base" ? "" : n);
  names.sort((a, b) => order(a).localeCompare(order(b)));
  const head = `<tr><th>classification</th>${
    ctx.points.map((p) =>
      `<th>${escapeHtml(p.label)}: ${
        escapeHtml(diffusionUnit(ctx.opts.units).header)
      }</th><th class="num">ΔD/D</th>`
    ).join("")
  }</tr>`;
  const body = names.map((n) => {
    const cells = ctx.points.map((p) => {
      const r = p.rows.get(`sensitivity/${n}`);
      if (r === undefined) return `<td>—</td><td>—</td>`;
      const rel = num(r.detail.relativeDelta);
      return estimateCell(r, `sens-${n}`) + (n === "base" ? `<td class="num">—</td>` : numCell(rel));
    }).join("");
    const any = ctx.points.map((p) => p.rows.get(`sensitivity/${n}`)).find((r) => r !== undefined);
    const tv = num(any?.detail.thresholdValue);
    const label = n === "base"
      ? "study thresholds (replayed)"
      : `${n.replace("*", " × ")}${tv !== null ? ` (= ${formatNumber(tv)})` : ""}`;
    return `<tr data-row="${escapeHtml(n)}"><th scope="row">${escapeHtml(label)}</th>${cells}</tr>`;
  }).join("");
  return title +
    `<p class="note">The stored frames are replayed through the classifier with each threshold halved and ` +
    `doubled (the others at the study's values) and D is refitted with the same rules; outwardCosine is ` +
    `varied through its angle. The base row reproduces the stored-series fit.</p>` +
    `<div class="scroll"><table class="analysis" id="sensitivity-table"><thead>${head}</thead><tbody>${body}` +
    `</tbody></table></div>`;
}

function evaporationTable(ctx: Ctx): string {
  const withE = ctx.points.filter((p) => p.rows.has("evaporation/evaporated"));
  if (withE.length === 0) return "";
  const objects = str(withE[0].rows.get("evaporation/evaporated")!.detail.objects) ?? "objects";
  const lostOf = objects === "loops" ? "line length" : "vortices";
  const head =
    `<tr><th>point</th><th>${escapeHtml(objects)} evaporated by the end [${pct(ctx.level)} CI]</th>` +
    `<th>t½ [CI]</th><th>rate, ${escapeHtml(objects)} per unit time [CI]</th>` +
    `<th>fraction of the ${lostOf} lost [CI]</th></tr>`;
  const body = withE.map((p) =>
    `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.label)}</td>` +
    estimateCell(p.rows.get("evaporation/evaporated"), "evaporated") +
    estimateCell(p.rows.get("evaporation/t_half"), "t-half") +
    estimateCell(p.rows.get("evaporation/rate"), "evaporation-rate") +
    estimateCell(p.rows.get("evaporation/lost_fraction"), "lost-fraction") + `</tr>`
  ).join("");
  return `<h3 id="evaporation-title">Evaporation and losses</h3>` +
    `<p class="note">Ensemble-mean number of ${
      escapeHtml(objects)
    } labelled evaporated by the end of the run; ` +
    `t½, the time by which half of them had left; the rate while that first half left (count/(2t½)); and the ` +
    `fraction of the ${lostOf} gone by the end by any channel (annihilation, friction, removed loops; ` +
    `negative when it grew, as line length can by stretching). ` +
    `Intervals: bootstrap over realisations.</p>` +
    `<div class="scroll"><table class="analysis" id="evaporation-table"><thead>${head}</thead><tbody>${body}` +
    `</tbody></table></div>`;
}

function vinenTable(ctx: Ctx): string {
  const withV = ctx.points.filter((p) => p.rows.has("vinen/chi2"));
  const any = ctx.points.map((p) => p.rows.get("vinen/D")).find((r) => r !== undefined);
  const source = str(any?.detail.sourceText);
  const title = `<h3 id="vinen-title">Vinen-equation fit</h3>`;
  const sourceNote = source ? `<p class="note" id="chi2-source">${escapeHtml(source)}.</p>` : "";
  if (withV.length === 0) {
    const reason = str(any?.detail.reason);
    return title + sourceNote + (reason ? `<p class="note">No Vinen fit: ${escapeHtml(reason)}.</p>` : "");
  }
  const head = `<tr><th>point</th><th>D/κ [${pct(ctx.level)} CI]</th><th>χ₂ [CI]</th>` +
    `<th class="num">reduced χ²</th><th class="num">terms</th><th>loss: observed [CI] / model</th><th>notes</th></tr>`;
  const body = withV.map((p) => {
    const d = p.rows.get("vinen/D");
    const lossObs = p.rows.get("vinen/loss_observed");
    const lossModel = p.rows.get("vinen/loss_model");
    const reasons = arr(d?.detail.reasons).concat(arr(d?.detail.warnings))
      .filter((x): x is string => typeof x === "string");
    return `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.label)}</td>` +
      (d && d.value === null
        ? `<td class="status" data-field="vinen-D" data-status="${escapeHtml(str(d.detail.status) ?? "")}">` +
          `<span class="warn">${
            escapeHtml(str(d.detail.status) === "rejected" ? "rejected: no D" : str(d.detail.status) ?? "—")
          }` +
          `</span></td>`
        : estimateCell(d, "vinen-D")) +
      estimateCell(p.rows.get("vinen/chi2"), "vinen-chi2") +
      numCell(p.rows.get("vinen/reduced_chi2")?.value ?? null) + numCell(num(d?.detail.terms)) +
      `<td>${lossObs?.value !== null && lossObs ? escapeHtml(formatNumber(lossObs.value!)) : "—"}${
        lossObs && lossObs.lower !== null && lossObs.upper !== null
          ? ` [${formatNumber(lossObs.lower)}, ${formatNumber(lossObs.upper)}]`
          : ""
      } / ${lossModel?.value !== null && lossModel ? escapeHtml(formatNumber(lossModel.value!)) : "—"}</td>` +
      `<td class="note">${reasons.map((x) => escapeHtml(x)).join("<br>")}</td></tr>`;
  }).join("");
  return title + sourceNote +
    `<p class="note">∂L/∂t = D∇²L − χ₂(κ/2π)L² fitted to the radial profiles (D and χ₂ together; χ₂ fixed ` +
    `only when given with --chi2), quasi-Poisson weights from the model; a fit with reduced χ² above 2 is ` +
    `rejected and gives no D. The loss is the fraction of the profiles' content gone over the fitted times.</p>` +
    `<div class="scroll"><table class="analysis" id="vinen-table"><thead>${head}</thead><tbody>${body}` +
    `</tbody></table></div>`;
}

// --- charts --------------------------------------------------------------------------------------------------

function colour(ctx: Ctx, field = "point", title = "parameter point") {
  const keys = ctx.points.map((p) => p.key);
  return {
    field,
    type: "nominal" as const,
    title,
    scale: { domain: keys, scheme: keys.length > 10 ? "category20" : "tableau10" },
    legend: { columns: keys.length > 6 ? 2 : 1 },
  };
}

function timeTitle(ctx: Ctx): string {
  const tu = ctx.opts.units?.time;
  return tu ? `time since the first frame t [${tu}]` : "time since the first frame t";
}

/** The single numeric swept parameter, if there is exactly one; else null (points on a nominal axis). */
function sweptAxis(ctx: Ctx): { path: string } | null {
  const paths = new Set(ctx.points.flatMap((p) => Object.keys(p.varied)));
  if (paths.size !== 1) return null;
  const [path] = [...paths];
  return ctx.points.every((p) => typeof p.varied[path] === "number") ? { path } : null;
}

function dVsParameterChart(ctx: Ctx): ChartSpec {
  const swept = sweptAxis(ctx);
  const rows: Record<string, unknown>[] = [];
  for (const p of ctx.points) {
    for (const e of ESTIMATORS) {
      const r = p.rows.get(`${e.analysis}/${e.name}`);
      if (!r || r.value === null) continue;
      rows.push({
        point: p.key,
        x: swept ? p.varied[swept.path] : p.key,
        estimator: e.label,
        D: r.value,
        lower: r.lower,
        upper: r.upper,
      });
    }
  }
  const id = "d-vs-parameter";
  const title = `${diffusionUnit(ctx.opts.units).header} per parameter point, three estimates`;
  const caption = `Each estimate with its ${pct(ctx.level)} bootstrap interval (error bars; none drawn ` +
    `when no interval was computed). Points without a diffusive regime have no MSD or D_R value.`;
  if (rows.length === 0) {
    return {
      id,
      title,
      caption,
      spec: null,
      emptyReason: "No parameter point has a D estimate (see the reasons in the table above).",
    };
  }
  const x = swept
    ? { field: "x", type: "quantitative", title: swept.path, scale: { zero: false, padding: 20 } }
    : { field: "x", type: "nominal", title: "parameter point", sort: ctx.points.map((p) => p.key) };
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: 300,
    data: { values: rows },
    encoding: {
      x,
      xOffset: swept ? undefined : { field: "estimator", type: "nominal" },
      color: { field: "estimator", type: "nominal", title: "estimator" },
    },
    layer: estimateLayers(70, [
      { field: "point", type: "nominal" },
      { field: "estimator", type: "nominal" },
      { field: "D", type: "quantitative", format: ".4g" },
      { field: "lower", type: "quantitative", title: "CI low", format: ".4g" },
      { field: "upper", type: "quantitative", title: "CI high", format: ".4g" },
    ], diffusionUnit(ctx.opts.units).header),
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

/** The fit windows [t₁, t₂] as shaded bands on a log time axis, one colour per point (none: no layer). */
function windowLayers(ctx: Ctx, windows: readonly Record<string, unknown>[], opacity: number): unknown[] {
  if (windows.length === 0) return [];
  return [{
    data: { values: windows },
    mark: { type: "rect", opacity },
    encoding: {
      x: { field: "t1", type: "quantitative", scale: { type: "log", nice: false }, title: timeTitle(ctx) },
      x2: { field: "t2" },
      color: colour(ctx),
    },
  }];
}

function msdFitChart(ctx: Ctx): ChartSpec {
  const id = "msd-fit";
  const title = "MSD with guide lines and the fit window";
  const data: Record<string, unknown>[] = [];
  const guides: Record<string, unknown>[] = [];
  const windows: Record<string, unknown>[] = [];
  const fits: Record<string, unknown>[] = [];
  for (const p of ctx.points) {
    const r = p.rows.get("diffusion/D");
    const s = rec(rec(r?.detail.origin)?.curve);
    if (!r || !s) continue;
    const t = arr(s.x), m = arr(s.msd);
    let tMin = Infinity, tMax = 0;
    t.forEach((tk, k) => {
      const v = m[k];
      if (typeof tk === "number" && tk > 0 && typeof v === "number" && v > 0) {
        data.push({ point: p.key, t: tk, msd: v });
        tMin = Math.min(tMin, tk);
        tMax = Math.max(tMax, tk);
      }
    });
    if (!(tMax > 0)) continue;
    const g = rec(r.detail.guides);
    const b = rec(g?.ballistic), dfu = rec(g?.diffusive);
    const bt = num(b?.t), bm = num(b?.msd), dt = num(dfu?.t), dm = num(dfu?.msd);
    if (bt !== null && bm !== null) {
      const t2 = Math.min(tMax, bt * 10);
      guides.push({ point: p.key, guide: "∝ t² (ballistic)", t: bt, msd: bm, seg: `${p.key} b` });
      guides.push({
        point: p.key,
        guide: "∝ t² (ballistic)",
        t: t2,
        msd: bm * (t2 / bt) ** 2,
        seg: `${p.key} b`,
      });
    }
    if (dt !== null && dm !== null) {
      const ta = Math.max(tMin, dt / 10), tb = Math.min(tMax, dt * 10);
      guides.push({ point: p.key, guide: "∝ t (diffusive)", t: ta, msd: dm * (ta / dt), seg: `${p.key} d` });
      guides.push({ point: p.key, guide: "∝ t (diffusive)", t: tb, msd: dm * (tb / dt), seg: `${p.key} d` });
    }
    const w = rec(r.detail.window);
    const t1 = num(w?.t1), t2 = num(w?.t2);
    const o = p.rows.get("diffusion/D_origin");
    const D = o?.value ?? null, bIntercept = num(rec(o?.detail.fitted)?.intercept);
    const d = num(r.detail.dimension) ?? 2;
    if (t1 !== null && t2 !== null) {
      windows.push({ point: p.key, t1, t2 });
      if (D !== null && bIntercept !== null) {
        for (const tt of [t1, Math.sqrt(t1 * t2), t2]) {
          fits.push({ point: p.key, t: tt, msd: 2 * d * D * tt + bIntercept });
        }
      }
    }
  }
  const caption =
    "Survivor-average MSD from t₀ (pairwise relative displacements, log–log). Dashed: ∝ t² through the first " +
    "value and ∝ t at the window's centre; shaded: the window [t₁, t₂]; thick line: the fit 2dDt + b (only " +
    "where the evidence shows a diffusive regime).";
  if (data.length === 0) {
    return { id, title, caption, spec: null, emptyReason: "No stored MSD fit with positive values." };
  }
  const lu = ctx.opts.units?.length;
  const yTitle = lu ? `MSD [${lu}²]` : "MSD (length²)";
  const x = { field: "t", type: "quantitative", title: timeTitle(ctx), scale: { type: "log", nice: false } };
  const y = { field: "msd", type: "quantitative", title: yTitle, scale: { type: "log" } };
  const layers: unknown[] = windowLayers(ctx, windows, 0.1);
  layers.push({
    data: { values: data },
    mark: { type: "line", strokeWidth: 1.5 },
    encoding: { x, y, color: colour(ctx) },
  });
  if (guides.length > 0) {
    layers.push({
      data: { values: guides },
      mark: { type: "line", strokeDash: [5, 4], strokeWidth: 1.2 },
      encoding: { x, y, color: colour(ctx), detail: { field: "seg", type: "nominal" } },
    });
  }
  if (fits.length > 0) {
    layers.push({
      data: { values: fits },
      mark: { type: "line", strokeWidth: 4, opacity: 0.6 },
      encoding: { x, y, color: colour(ctx) },
    });
  }
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: 340,
    layer: layers,
    config: { ...CONFIG, axisY: { labelExpr: DECADE_LABELS } },
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

function localSlopeChart(ctx: Ctx): ChartSpec {
  const id = "local-slope";
  const title = "Local slope α(t) = d ln MSD / d ln t";
  const rows: Record<string, unknown>[] = [];
  const windows: Record<string, unknown>[] = [];
  let band: [number, number] = [0.85, 1.15];
  for (const p of ctx.points) {
    const r = p.rows.get("diffusion/D");
    const s = rec(rec(r?.detail.origin)?.slope);
    if (!r || !s) continue;
    const stored = arr(rec(r.detail.rules)?.alphaBand);
    if (typeof stored[0] === "number" && typeof stored[1] === "number") band = [stored[0], stored[1]];
    const t = arr(s.x), a = arr(s.alpha);
    t.forEach((tk, k) => {
      if (typeof tk === "number" && tk > 0 && typeof a[k] === "number") {
        rows.push({ point: p.key, t: tk, alpha: a[k] });
      }
    });
    const w = rec(r.detail.window);
    if (num(w?.t1) !== null && num(w?.t2) !== null) windows.push({ point: p.key, t1: w!.t1, t2: w!.t2 });
  }
  const caption =
    "Smoothed local exponent of the survivor-average MSD on a log grid: 2 = ballistic, 1 = diffusive (grey " +
    `lines). Band: the accepted range [${band[0]}, ${band[1]}]; shaded per point: the window chosen from ` +
    "this curve (the cohort and lag exponents are in the evidence table and the D(τ) chart).";
  if (rows.length === 0) return { id, title, caption, spec: null, emptyReason: "No stored local slope." };
  const x = { field: "t", type: "quantitative", title: timeTitle(ctx), scale: { type: "log", nice: false } };
  const layers: unknown[] = [
    {
      data: { values: [{ lo: band[0], hi: band[1] }] },
      mark: { type: "rect", color: "#999999", opacity: 0.15 },
      encoding: { y: { field: "lo", type: "quantitative" }, y2: { field: "hi" } },
    },
    {
      data: { values: [{ a: 1 }, { a: 2 }] },
      mark: { type: "rule", color: "#888888", strokeDash: [4, 3] },
      encoding: { y: { field: "a", type: "quantitative" } },
    },
  ];
  layers.push(...windowLayers(ctx, windows, 0.08));
  layers.push({
    data: { values: rows },
    mark: { type: "line", strokeWidth: 2, point: { filled: true, size: 20 }, tooltip: true },
    encoding: {
      x,
      y: { field: "alpha", type: "quantitative", title: "α(t)", scale: { domain: [0, 2.5], clamp: true } },
      color: colour(ctx),
    },
  });
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: 280,
    layer: layers,
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

/** D(τ) = MSD(τ)/(2dτ) of the lag increments: flat for diffusion. */
function lagChart(ctx: Ctx): ChartSpec {
  const id = "lag-d";
  const title = "Lag increments: D(τ) = ⟨|Δr(τ)|²⟩/(2dτ)";
  const rows: Record<string, unknown>[] = [];
  const ranges: Record<string, unknown>[] = [];
  for (const p of ctx.points) {
    const r = p.rows.get("diffusion/D_lag");
    const dx = rec(r?.detail.Dx);
    if (!r || !dx) continue;
    const x = arr(dx.x), D = arr(dx.D);
    x.forEach((tau, q) => {
      if (typeof tau === "number" && tau > 0 && typeof D[q] === "number") {
        rows.push({ point: p.key, tau, D: D[q] });
      }
    });
    const ex = rec(r.detail.exponent);
    if (num(ex?.from) !== null && num(ex?.to) !== null) {
      ranges.push({ point: p.key, t1: ex!.from, t2: ex!.to });
    }
  }
  const caption =
    "For diffusion D(τ) is flat beyond the correlation time; growth with τ means displacements " +
    "grow faster than the lag (superdiffusion), whatever a fit from t₀ says. Shaded: the lags judged " +
    "(3τ_c to ½(t₂ − t₁)).";
  if (rows.length === 0) {
    return {
      id,
      title,
      caption,
      spec: null,
      emptyReason: "No lag estimator is stored (no window, or unequal frames).",
    };
  }
  const x = { field: "tau", type: "quantitative", title: "lag τ", scale: { type: "log", nice: false } };
  const layers: unknown[] = ranges.length > 0
    ? [{
      data: { values: ranges },
      mark: { type: "rect", opacity: 0.08 },
      encoding: {
        x: { field: "t1", type: "quantitative", scale: { type: "log", nice: false }, title: "lag τ" },
        x2: { field: "t2" },
        color: colour(ctx),
      },
    }]
    : [];
  layers.push({
    data: { values: rows },
    mark: { type: "line", strokeWidth: 2, point: { filled: true, size: 18 }, tooltip: true },
    encoding: { x, y: { field: "D", type: "quantitative", title: "D(τ)" }, color: colour(ctx) },
  });
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: 260,
    layer: layers,
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

function vinenChart(ctx: Ctx): ChartSpec {
  const id = "vinen-fit";
  const title = "Vinen-equation fit against the radial profiles";
  const rows: Record<string, unknown>[] = [];
  let reason = "No Vinen fit is stored (run spindrift analyse).";
  for (const p of ctx.points) {
    const r = p.rows.get("vinen/D");
    if (!r) continue;
    const prof = rec(r.detail.profiles);
    if (!prof) {
      reason = `No Vinen fit: ${str(r.detail.reason) ?? "not available"}.`;
      continue;
    }
    const rr = arr(prof?.r);
    for (const c of arr(prof?.curves)) {
      const cc = rec(c);
      const t = num(cc?.t);
      if (!cc || t === null) continue;
      const mean = arr(cc.mean), model = arr(cc.model);
      rr.forEach((rk, k) => {
        rows.push({
          point: p.key,
          t,
          r: rk,
          data: typeof mean[k] === "number" ? mean[k] : null,
          model: typeof model[k] === "number" ? model[k] : null,
        });
      });
    }
  }
  const caption = "Dots: ensemble-mean radial density (main cluster, common bins) at the first time (the " +
    "initial condition), a third, two thirds and the end of the fit window; lines: the fitted Vinen-equation " +
    "model at the same times (also for rejected fits, to show where the model fails). One panel per point.";
  if (rows.length === 0) return { id, title, caption, spec: null, emptyReason: reason };
  const lu = ctx.opts.units?.length;
  const spec = {
    $schema: SCHEMA,
    data: { values: rows },
    facet: { field: "point", type: "nominal", title: null, sort: ctx.points.map((p) => p.key) },
    columns: 3,
    spec: {
      width: Math.max(180, Math.floor((ctx.width - 60) / Math.min(3, ctx.points.length))),
      height: 220,
      encoding: {
        x: { field: "r", type: "quantitative", title: lu ? `r [${lu}]` : "r (length)" },
        // Time as a sequential colour (points of a sweep have different fit windows, so a shared
        // ordinal legend would pair unrelated times).
        color: {
          field: "t",
          type: "quantitative",
          title: "time",
          scale: { scheme: "viridis", reverse: true },
        },
        detail: { field: "t", type: "quantitative" },
      },
      layer: [
        {
          mark: { type: "point", filled: true, size: 28 },
          encoding: { y: { field: "data", type: "quantitative", title: "density" } },
        },
        {
          mark: { type: "line", strokeWidth: 2, invalid: "break-paths-filter-domains" },
          encoding: { y: { field: "model", type: "quantitative", title: "density" } },
        },
      ],
    },
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

function corrChart(ctx: Ctx): ChartSpec {
  const id = "velocity-correlations";
  const title = "Velocity correlations f(r), g(r)";
  const rows: Record<string, unknown>[] = [];
  let reason = "No velocity correlations are stored.";
  for (const p of ctx.points) {
    const r = p.rows.get("correlations/f_integral");
    if (!r) continue;
    if (r.value === null) {
      reason = `No velocity correlations: ${str(r.detail.reason) ?? "not available"}.`;
      continue;
    }
    const rm = arr(r.detail.rMean), f = arr(r.detail.f), g = arr(r.detail.g);
    rm.forEach((x, k) => {
      if (typeof x !== "number") return;
      if (typeof f[k] === "number") rows.push({ point: p.key, r: x, value: f[k], curve: "f (longitudinal)" });
      if (typeof g[k] === "number") rows.push({ point: p.key, r: x, value: g[k], curve: "g (transverse)" });
    });
    const fg = rec(r.detail.fFromG);
    const fr = arr(fg?.r), ff = arr(fg?.f);
    fr.forEach((x, k) => {
      if (typeof x === "number" && typeof ff[k] === "number") {
        rows.push({ point: p.key, r: x, value: ff[k], curve: "f implied by g (isotropy)" });
      }
    });
  }
  const caption = "Two-point correlations of the velocity at probe points in the main cluster (probes near " +
    "vortex cores excluded), normalised by u′²; the dashed curve is the f that g implies for an isotropic " +
    "incompressible field (g = f + r f′ in 2D). Point-vortex fields have heavy velocity tails, so values " +
    "above 1 at small r are expected.";
  if (rows.length === 0) return { id, title, caption, spec: null, emptyReason: reason };
  const lu = ctx.opts.units?.length;
  const spec = {
    $schema: SCHEMA,
    data: { values: rows },
    facet: { field: "point", type: "nominal", title: null, sort: ctx.points.map((p) => p.key) },
    columns: 3,
    spec: {
      width: Math.max(180, Math.floor((ctx.width - 60) / Math.min(3, ctx.points.length))),
      height: 220,
      mark: { type: "line", strokeWidth: 2, point: { size: 16 } },
      encoding: {
        x: { field: "r", type: "quantitative", title: lu ? `r [${lu}]` : "r (length)" },
        y: { field: "value", type: "quantitative", title: "correlation" },
        color: { field: "curve", type: "nominal", title: "curve" },
        strokeDash: { field: "curve", type: "nominal", legend: null },
      },
    },
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}
