/**
 * The report's "Answers" section, built from the stored ensemble results (`ensemble_results`, written by
 * `spindrift analyse`): the study's question answered (differences and trend of D between points), then per
 * point the answer with its interval or "no diffusive regime" with the reasons, the three estimators' exponent
 * evidence, D per point, the MSD on log–log axes with guide lines and the window, the local slope α(t), the lag
 * estimator's D(τ), the threshold-sensitivity table (collapsed when there is no regime to be sensitive), the
 * evaporation table, the Vinen fit against the measured profiles with its goodness of fit and where χ₂ came
 * from, and the velocity correlations. The answer-first summary at the top of the page is `summary.ts`.
 *
 * Every number shown comes from a stored row: table cells carry the stored value in `data-value` (full
 * precision, stored units) and show it with `formatNumber`, so a test can compare the page with the database.
 * D is shown in the stored unit and, for physical-unit studies with a recorded κ, as D/κ beside it; charts show
 * D/κ whenever κ is known.
 *
 * @example
 * ```ts
 * const section = buildAnalysisSection(agg, readEnsembleResults(db, agg.study.id), { units });
 * // section.parts: HTML blocks and charts in page order; section.charts: the chart specs (for the figures)
 * ```
 */
import type { TopLevelSpec } from "vega-lite";
import type { EnsembleResult } from "../store/ensemble.ts";
import type { StudyAggregate } from "./aggregate.ts";
import { escapeHtml, formatNumber } from "./format.ts";
import { thresholdChange } from "./labels.ts";
import {
  axisTitle,
  dDisplay,
  lengthScale,
  type ReportUnits,
  type Scale,
  squaredUnit,
  timeScale,
} from "./quantities.ts";
import {
  arr,
  ciText,
  estimateCell,
  groupResults,
  levelOf,
  num,
  numCell,
  pct,
  percentCell,
  type PointRows,
  rec,
  str,
  strings,
  valueSpan,
  withNames,
} from "./_results.ts";
import {
  type ChartOptions,
  type ChartSpec,
  chartUnits,
  CONFIG,
  DECADE_LABELS,
  estimateLayers,
  numberFormat,
  pointColourEncoding,
  type PointView,
  pointView,
  SCHEMA,
} from "./specs.ts";

/** A piece of the section: HTML (already escaped) or a chart. */
export type AnalysisPart = { readonly html: string } | { readonly chart: ChartSpec };

export interface AnalysisSection {
  readonly parts: readonly AnalysisPart[];
  /** The charts among the parts, in order. */
  readonly charts: readonly ChartSpec[];
  /** True when the database holds ensemble results for this study revision. */
  readonly present: boolean;
  /** Lines for the page's provenance table: when the analysis ran, its seeds, where χ₂ came from. */
  readonly provenance: readonly (readonly [string, string])[];
}

const ESTIMATORS = [
  { analysis: "diffusion", name: "D", label: "answer (fixed cohort)", shape: "circle" },
  { analysis: "diffusion", name: "D_origin", label: "survivor average from t₀", shape: "triangle-up" },
  { analysis: "diffusion", name: "D_lag", label: "lag increments", shape: "diamond" },
  { analysis: "diffusion", name: "D_R", label: "cohort spread (D_R)", shape: "square" },
  { analysis: "vinen", name: "D", label: "Vinen-equation fit", shape: "cross" },
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
  const view = pointView(agg);
  const points = groupResults(agg, results, view);
  const units = chartUnits(opts);
  const ctx: Ctx = {
    points,
    view,
    units,
    d: dDisplay(units),
    width: opts.width ?? 800,
    level: levelOf(points),
    classification: rec(agg.overview.observables?.classification),
  };
  const charts = [
    dPerPointChart(ctx),
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
  return { present: true, parts, charts, provenance: provenance(ctx) };
}

interface Ctx {
  readonly points: readonly PointRows[];
  readonly view: PointView;
  readonly units: ReportUnits;
  /** How D is shown on charts (D/κ when κ is known). */
  readonly d: { readonly factor: number; readonly title: string };
  readonly width: number;
  readonly level: number;
  readonly classification: Readonly<Record<string, unknown>> | null;
}

function staleNote(ctx: Ctx): string {
  const stale = ctx.points.filter((p) => {
    const n = num(p.rows.get("diffusion/D")?.detail.realisations);
    return n !== null && n !== p.done;
  });
  if (stale.length === 0) return "";
  return `<p class="errors-inline warn" id="analysis-stale">The analysis is out of date for ${
    stale.map((p) => escapeHtml(p.name)).join(", ")
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

/** The study's question answered, first (stored `question/verdict` lines, differences and trend). */
function questionBlock(ctx: Ctx): string {
  const verdict = ctx.points.map((p) => p.rows.get("question/verdict")).find((r) => r !== undefined);
  if (!verdict) return "";
  const lines = strings(verdict.detail.lines).map((l) => withNames(l, ctx.points));
  const diffs = ctx.points.filter((p) => p.rows.has("question/difference"));
  const trend = ctx.points.map((p) => p.rows.get("question/trend_slope")).find((r) => r !== undefined);
  const dh = escapeHtml(ctx.units.dHeader);
  let table = "";
  if (diffs.length > 0) {
    const head = `<tr><th>point</th><th>${dh} − ${dh}(base) [${pct(ctx.level)} CI]</th>` +
      `<th>${dh} / ${dh}(base) [CI]</th></tr>`;
    const body = diffs.map((p) =>
      `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.name)}</td>` +
      estimateCell(p.rows.get("question/difference"), "difference") +
      estimateCell(p.rows.get("question/ratio"), "ratio") + `</tr>`
    ).join("");
    const baseLabel = str(rec(diffs[0].rows.get("question/difference")?.detail.base)?.label);
    const base = ctx.points.find((p) => p.label === baseLabel)?.name ?? baseLabel;
    table = `<p class="note">Base: ${escapeHtml(base ?? "the first point")}. Intervals: bootstrap of each ` +
      `point's realisations separately (the points are independent), window fixed as for the point's own ` +
      `interval.</p><table class="analysis" id="question-table"><thead>${head}</thead><tbody>${body}</tbody>` +
      `</table>`;
  }
  const trendText = trend
    ? `<p class="note" id="question-trend">Trend: weighted least squares of D against ${
      escapeHtml(str(trend.detail.parameter) ?? "the swept parameter")
    } (weights 1/se²), slope ${trend.value === null ? "—" : valueSpan("value", trend.value)}${
      ciText(trend.lower, trend.upper)
    } per unit of the parameter.</p>`
    : "";
  return `<div id="question-answered"><h3>The question answered</h3>${
    lines.map((l) => `<p class="answer">${escapeHtml(l)}</p>`).join("")
  }${table}${trendText}</div>`;
}

function intro(ctx: Ctx): string {
  const first = ctx.points.find((p) => p.rows.has("diffusion/D"))?.rows.get("diffusion/D");
  const d = first?.detail ?? {};
  const B = num(d.replicates);
  const rule = str(d.rule);
  const unit = ctx.units.dUnit;
  return `<p class="note">ν′ = D/κ of the main cluster from three estimators of the mean-square ` +
    `displacement, each from pairwise relative displacements (the cluster's drift cancels; no (1 − 1/N) bias): ` +
    `the survivor average from t₀, a fixed cohort (objects in the main cluster throughout the window, ` +
    `displacements from t₁) and lag increments from many start times, D(τ) = MSD(τ)/(2dτ). The answer is the ` +
    `cohort's D, given only when the evidence agrees: ${escapeHtml(rule ?? "")}. ${
      pct(ctx.level)
    } intervals ` +
    `by bootstrap over realisations${B !== null ? ` (B = ${B})` : ""} with the window fixed; the window's ` +
    `support (share of replicates that find one) is shown beside it. ${
      unit === null
        ? "D is in length²/time of the study's units, i.e. D/κ (time is measured in ℓ²/κ)."
        : `D is in ${escapeHtml(unit)}${
          ctx.units.kappa !== undefined ? "; D/κ (dimensionless) is shown beside it" : ""
        }.`
    } Method: docs/methods.md §5.1.</p>`;
}

/** The fit's advice (few realisations, a marginal regime), one line each. */
function warningNotes(warnings: unknown): string {
  return strings(warnings).map((w) => `<br><span class="fit-warning">warning: ${escapeHtml(w)}</span>`)
    .join("");
}

/** The answer cell: the value with its interval (and D/κ in physical units), or the status with every reason. */
function answerCell(ctx: Ctx, r: EnsembleResult | undefined): string {
  if (r === undefined) return `<td>—</td>`;
  const warnings = warningNotes(r.detail.warnings);
  if (r.value !== null) {
    const ci = r.lower !== null && r.upper !== null
      ? ` [${valueSpan("lower", r.lower)}, ${valueSpan("upper", r.upper)}]`
      : ` <span class="note">(no interval)</span>`;
    const kappa = !ctx.units.kappaUnits && ctx.units.kappa !== undefined
      ? `<br><span class="dk">D/κ = ${formatNumber(r.value / ctx.units.kappa)}${
        ciText(r.lower, r.upper, 1 / ctx.units.kappa)
      }</span>`
      : "";
    return `<td data-field="diffusion-D">${valueSpan("value", r.value)}${ci}${kappa}${warnings}</td>`;
  }
  const status = str(r.detail.status) ?? "not available";
  const reasons = strings(r.detail.reasons);
  const text = status === "no-diffusive-regime" ? "no diffusive regime" : status;
  return `<td class="status" data-field="diffusion-D" data-status="${
    escapeHtml(status)
  }"><span class="warn">${escapeHtml(text)}</span>${
    reasons.map((x) => `<br><span class="note reason">${escapeHtml(x)}</span>`).join("")
  }${warnings}</td>`;
}

function diffusionTable(ctx: Ctx): string {
  const tu = ctx.units.labels?.time;
  const head =
    `<tr><th>point</th><th class="num">n</th><th>${escapeHtml(ctx.units.dHeader)}, the answer [${
      pct(ctx.level)
    } CI]</th>` +
    `<th class="num">τ_c${tu ? ` [${escapeHtml(tu)}]` : ""}</th><th class="num">window t₁</th>` +
    `<th class="num">window t₂</th><th class="num">support</th><th class="num">lost in window</th></tr>`;
  const body = ctx.points.map((p) => {
    const d = p.rows.get("diffusion/D");
    return `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.name)}</td>` +
      numCell(num(d?.detail.realisations)) + answerCell(ctx, d) +
      numCell(p.rows.get("diffusion/tau_c")?.value ?? null) +
      numCell(p.rows.get("diffusion/window_start")?.value ?? null) +
      numCell(p.rows.get("diffusion/window_end")?.value ?? null) +
      percentCell(p.rows.get("diffusion/support")?.value ?? null) +
      percentCell(p.rows.get("diffusion/loss_in_window")?.value ?? null) + `</tr>`;
  }).join("");
  const seeds = ctx.points.map((p) => {
    const det = p.rows.get("diffusion/D")?.detail ?? {};
    const seed = str(det.seed);
    return seed
      ? `<li>${escapeHtml(p.name)}: ${escapeHtml(str(det.interval) ?? "—")}${
        num(det.replicates) ? `, B = ${num(det.replicates)}` : ""
      }, seed <code class="seed" data-seed="${escapeHtml(seed)}">${escapeHtml(seed)}</code></li>`
      : "";
  }).join("");
  return `<table class="analysis" id="diffusion-table"><thead>${head}</thead><tbody>${body}</tbody></table>` +
    `<p class="note">Support: share of bootstrap replicates whose own window passes (a warning below 90 %). ` +
    `Lost in window: share of the objects in the main cluster at t₁ gone from it by t₂.</p>` +
    (seeds
      ? `<details class="note"><summary>Interval method and bootstrap seeds</summary><ul>${seeds}</ul>` +
        `</details>`
      : "");
}

const EVIDENCE = [
  { name: "D_origin", label: "survivor average from t₀", x: "t" },
  { name: "D_cohort", label: "fixed cohort", x: "s = t − t₁" },
  { name: "D_lag", label: "lag increments", x: "τ" },
] as const;

/** Per point and estimator: the window-mean exponent with its interval, pass/fail, and the fitted D. */
function evidenceTable(ctx: Ctx): string {
  const head = `<tr><th>point</th><th>estimator</th><th>exponent [${pct(ctx.level)} CI] over its range</th>` +
    `<th>verdict</th><th>${escapeHtml(ctx.units.dHeader)} [CI]</th></tr>`;
  const body = ctx.points.flatMap((p) =>
    EVIDENCE.map((e) => {
      const r = p.rows.get(`diffusion/${e.name}`);
      const ex = rec(r?.detail.exponent);
      if (!r || !ex) return "";
      const v = num(ex.value);
      const pass = ex.pass === true;
      const fitted = rec(r.detail.fitted);
      const dCell = r.value !== null
        ? estimateCell(r, `evidence-${e.name}`)
        : `<td class="note">slope ${
          formatNumber(num(fitted?.D) ?? Number.NaN)
        } (not a diffusion coefficient)</td>`;
      return `<tr data-point="${escapeHtml(p.label)}" data-estimator="${e.name}"><td>${
        escapeHtml(p.name)
      }</td>` +
        `<td>${escapeHtml(e.label)}</td><td data-value="${v ?? ""}">${
          v === null ? "—" : escapeHtml(formatNumber(v))
        }${ciText(num(ex.lower), num(ex.upper))}<br><span class="note">${escapeHtml(e.x)} = ${
          formatNumber(num(ex.from) ?? Number.NaN)
        }–${formatNumber(num(ex.to) ?? Number.NaN)}</span></td><td class="${pass ? "" : "warn"}">${
          pass ? "consistent with diffusion" : escapeHtml(str(ex.reason) ?? "fails")
        }</td>${dCell}</tr>`;
    })
  ).join("");
  if (body === "") return "";
  return `<h3>Evidence for a diffusive regime</h3><p class="note">Diffusion has exponent 1 for every ` +
    `estimator; accepted [0.85, 1.15] for the window mean, and at each point of the log grid the bootstrap ` +
    `interval of the local exponent must reach into that band. Where the regime is not declared, the fitted ` +
    `slopes are shown for reference only.</p><table class="analysis" id="evidence-table"><thead>${head}` +
    `</thead><tbody>${body}</tbody></table>`;
}

/** The sensitivity table: readable threshold changes, D and ΔD/D in %; collapsed when no base has a regime. */
function sensitivityTable(ctx: Ctx): string {
  const names = [
    ...new Set(
      ctx.points.flatMap((p) =>
        [...p.rows.values()].filter((r) => r.analysis === "sensitivity").map((r) => r.name)
      ),
    ),
  ];
  const title = `<h3 id="sensitivity-title">Sensitivity of D to the classification thresholds</h3>`;
  if (names.length === 0) {
    return title + `<p class="note">Not computed (run <code>spindrift analyse</code> without ` +
      `<code>--no-sensitivity</code>).</p>`;
  }
  const order = (n: string) => (n === "base" ? "" : n);
  names.sort((a, b) => order(a).localeCompare(order(b)));
  const head = `<tr><th>classification</th>${
    ctx.points.map((p) =>
      `<th>${escapeHtml(p.name)}: ${escapeHtml(ctx.units.dHeader)}</th><th class="num">ΔD/D</th>`
    ).join("")
  }</tr>`;
  const baseReason = (p: PointRows) => str(p.rows.get("sensitivity/base")?.detail.reason);
  const body = names.map((n) => {
    const cells = ctx.points.map((p) => {
      const r = p.rows.get(`sensitivity/${n}`);
      if (r === undefined) return `<td>—</td><td>—</td>`;
      const rel = num(r.detail.relativeDelta);
      let cell: string;
      if (r.value === null && n !== "base" && str(r.detail.reason) === baseReason(p)) {
        // The same verdict as the study's thresholds: say so briefly instead of repeating the reasons.
        cell = `<td class="status" data-field="sens-${escapeHtml(n)}" data-status="${
          escapeHtml(str(r.detail.status) ?? "")
        }"><span class="warn">no diffusive regime</span> <span class="note">(same reason)</span></td>`;
      } else cell = estimateCell(r, `sens-${n}`);
      const delta = n === "base" || rel === null
        ? `<td class="num">—</td>`
        : `<td class="num" data-value="${String(rel)}">${rel > 0 ? "+" : ""}${
          escapeHtml(formatNumber(100 * rel))
        } %</td>`;
      return cell + delta;
    }).join("");
    const any = ctx.points.map((p) => p.rows.get(`sensitivity/${n}`)).find((r) => r !== undefined);
    const threshold = n.split("*")[0];
    const label = n === "base"
      ? "study thresholds (replayed)"
      : thresholdChange(n, num(ctx.classification?.[threshold]), num(any?.detail.thresholdValue));
    return `<tr data-row="${escapeHtml(n)}"><th scope="row">${escapeHtml(label)}</th>${cells}</tr>`;
  }).join("");
  const note = `<p class="note">The stored frames are replayed through the classifier with each threshold ` +
    `halved and doubled (the others at the study's values) and D is refitted with the same rules; the outward ` +
    `criterion is varied through its angle. The base row reproduces the stored-series fit.</p>`;
  const table =
    `<table class="analysis" id="sensitivity-table"><thead>${head}</thead><tbody>${body}</tbody>` +
    `</table>`;
  const noBase = ctx.points.every((p) => p.rows.get("sensitivity/base")?.value == null);
  if (!noBase) return title + note + table;
  const rows = names.filter((n) => n !== "base");
  const found = rows.filter((n) => ctx.points.some((p) => p.rows.get(`sensitivity/${n}`)?.value != null));
  return title + `<p class="note" id="sensitivity-collapsed">The study's own thresholds give no diffusive ` +
    `regime, so there is no D whose sensitivity could be measured. ${
      found.length === 0
        ? `None of the ${rows.length} varied thresholds finds one either.`
        : `${found.length} of the ${rows.length} varied thresholds find one (open the table).`
    }</p><details><summary>The table (${rows.length} threshold changes)</summary>${note}${table}</details>`;
}

function evaporationTable(ctx: Ctx): string {
  const withE = ctx.points.filter((p) => p.rows.has("evaporation/evaporated"));
  if (withE.length === 0) return "";
  const objects = str(withE[0].rows.get("evaporation/evaporated")!.detail.objects) ?? "objects";
  const lostOf = objects === "loops" ? "line length" : "vortices";
  const tu = ctx.units.labels?.time;
  const head =
    `<tr><th>point</th><th>${escapeHtml(objects)} evaporated by the end [${pct(ctx.level)} CI]</th>` +
    `<th>t½${tu ? ` [${escapeHtml(tu)}]` : ""} [CI]</th><th>rate, ${escapeHtml(objects)} per ${
      escapeHtml(tu ?? "unit time")
    } [CI]</th><th>${lostOf} lost by the end [CI]</th></tr>`;
  const body = withE.map((p) =>
    `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.name)}</td>` +
    estimateCell(p.rows.get("evaporation/evaporated"), "evaporated") +
    estimateCell(p.rows.get("evaporation/t_half"), "t-half") +
    estimateCell(p.rows.get("evaporation/rate"), "evaporation-rate") +
    estimateCell(p.rows.get("evaporation/lost_fraction"), "lost-fraction", 100, " %") + `</tr>`
  ).join("");
  return `<h3 id="evaporation-title">Evaporation and losses</h3>` +
    `<p class="note">Ensemble-mean number of ${
      escapeHtml(objects)
    } labelled evaporated by the end of the run; ` +
    `t½, the time by which half of them had left; the rate while that first half left (count/(2t½)); and the ` +
    `fraction of the ${lostOf} gone by the end by any channel (annihilation, friction, removed loops; ` +
    `negative when it grew, as line length can by stretching). Intervals: bootstrap over realisations ` +
    `(docs/methods.md §5.6).</p>` +
    `<table class="analysis" id="evaporation-table"><thead>${head}</thead><tbody>${body}</tbody></table>`;
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
  const head = `<tr><th>point</th><th>${escapeHtml(ctx.units.dHeader)} [${pct(ctx.level)} CI]</th>` +
    `<th>χ₂ [CI]</th><th class="num">reduced χ²</th><th class="num">terms</th>` +
    `<th>lost over the fit: observed [CI] / model</th></tr>`;
  const notes: string[] = [];
  const body = withV.map((p) => {
    const d = p.rows.get("vinen/D");
    const lossObs = p.rows.get("vinen/loss_observed");
    const lossModel = p.rows.get("vinen/loss_model");
    // The first reason of a fit without D is in its cell already.
    const reasons = [
      ...strings(d?.detail.reasons).slice(d?.value === null ? 1 : 0),
      ...strings(d?.detail.warnings),
    ];
    if (reasons.length > 0) {
      notes.push(`<li><strong>${escapeHtml(p.name)}</strong>: ${reasons.map(escapeHtml).join("; ")}</li>`);
    }
    const pctOf = (v: number | null | undefined) => (v == null ? "—" : `${formatNumber(100 * v)} %`);
    return `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.name)}</td>` +
      estimateCell(d, "vinen-D") + estimateCell(p.rows.get("vinen/chi2"), "vinen-chi2") +
      numCell(p.rows.get("vinen/reduced_chi2")?.value ?? null) + numCell(num(d?.detail.terms)) +
      `<td>${pctOf(lossObs?.value)}${
        lossObs && lossObs.lower !== null && lossObs.upper !== null
          ? ` [${formatNumber(100 * lossObs.lower)}, ${formatNumber(100 * lossObs.upper)}] %`
          : ""
      } / ${pctOf(lossModel?.value)}</td></tr>`;
  }).join("");
  return title + sourceNote +
    `<p class="note">∂L/∂t = D∇²L − χ₂(κ/2π)L² fitted to the radial profiles (D and χ₂ together; χ₂ fixed ` +
    `only when given with --chi2), quasi-Poisson weights from the model; a fit with reduced χ² above 2 is ` +
    `rejected and gives no D (docs/methods.md §5.2). The loss is the fraction of the profiles' content gone ` +
    `over the fitted times.</p><table class="analysis" id="vinen-table"><thead>${head}</thead><tbody>${body}` +
    `</tbody></table>${notes.length > 0 ? `<ul class="note vinen-notes">${notes.join("")}</ul>` : ""}`;
}

// --- charts --------------------------------------------------------------------------------------------------

/** The time axis of the analysis charts: display scale from the largest time drawn. */
function timeAxis(
  ctx: Ctx,
  tMax: number,
  what = "time since the first frame t",
): { s: Scale; title: string } {
  const s = timeScale(ctx.units, tMax);
  return { s, title: axisTitle(what, s.unit) };
}

/**
 * Each point's window [t₁, t₂] as a bar in its colour along the bottom of a plot of height `height` (pixel
 * positions, one row per point), so windows of several points never hide each other or the data.
 */
function windowBars(
  ctx: Ctx,
  windows: readonly { point: string; t1: number; t2: number }[],
  o: { readonly height: number; readonly time: Scale; readonly label?: string },
) {
  if (windows.length === 0) return [];
  const label = o.label ?? "fit window";
  const row = new Map(ctx.view.names.map((n, i) => [n, i]));
  const first = windows.reduce((a, w) => (w.t1 < a.t1 ? w : a), windows[0]);
  const values = windows.map((w) => {
    const i = row.get(w.point) ?? 0;
    return {
      point: w.point,
      t1: w.t1 * o.time.factor,
      t2: w.t2 * o.time.factor,
      y: o.height - 4 - 7 * i,
      y2: o.height - 9 - 7 * i,
      label: w === first ? label : "",
    };
  });
  return [{
    data: { name: label === "fit window" ? "fit windows" : label, values },
    layer: [
      { mark: { type: "rect", opacity: 0.85, tooltip: true } },
      {
        mark: { type: "text", align: "right", baseline: "middle", dx: -4, fontSize: 11, color: "#444444" },
        encoding: { text: { field: "label" }, x: { field: "t1", type: "quantitative" } },
      },
    ],
    encoding: {
      x: { field: "t1", type: "quantitative" },
      x2: { field: "t2" },
      y: { field: "y", type: "quantitative", scale: null },
      y2: { field: "y2" },
      color: pointColourEncoding(ctx.view, true),
    },
  }];
}

/** D per point and estimator: points on a categorical axis, estimators side by side (shape), point colours. */
function dPerPointChart(ctx: Ctx): ChartSpec {
  const rows: Record<string, unknown>[] = [];
  for (const p of ctx.points) {
    for (const e of ESTIMATORS) {
      const r = p.rows.get(`${e.analysis}/${e.name}`);
      if (!r || r.value === null) continue;
      const f = ctx.d.factor;
      rows.push({
        point: p.name,
        estimator: e.label,
        D: r.value * f,
        lower: r.lower === null ? null : r.lower * f,
        upper: r.upper === null ? null : r.upper * f,
      });
    }
  }
  const id = "d-vs-parameter";
  const title = `${ctx.d.title} per parameter point`;
  const caption =
    `Each estimate with its ${pct(ctx.level)} bootstrap interval (error bars; none drawn when no ` +
    `interval was computed), estimators side by side. Only estimates with a value are drawn: points without ` +
    `a diffusive regime have no MSD-based D.${
      ctx.d.title === "D/κ" && !ctx.units.kappaUnits ? " Physical-unit D divided by the recorded κ." : ""
    }`;
  if (rows.length === 0) {
    return {
      id,
      title,
      caption,
      spec: null,
      emptyReason: "No parameter point has a D estimate (the reasons are in the table above).",
    };
  }
  const labelLimit = Math.max(80, Math.floor(ctx.width / Math.max(1, ctx.points.length)) - 8);
  const used = ESTIMATORS.filter((e) => rows.some((r) => r.estimator === e.label));
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height: 300,
    data: { name: "estimates", values: rows },
    encoding: {
      x: {
        field: "point",
        type: "nominal",
        title: "parameter point",
        sort: ctx.view.names,
        axis: { labelAngle: ctx.points.length > 4 ? -30 : 0, labelLimit },
      },
      xOffset: { field: "estimator", type: "nominal", sort: used.map((e) => e.label) },
      color: { ...pointColourEncoding(ctx.view, false), legend: null },
      shape: {
        field: "estimator",
        type: "nominal",
        title: "estimator",
        scale: { domain: used.map((e) => e.label), range: used.map((e) => e.shape) },
      },
    },
    layer: estimateLayers(80, [
      { field: "point", type: "nominal" },
      { field: "estimator", type: "nominal" },
      { field: "D", type: "quantitative", format: ".4g", title: ctx.d.title },
      { field: "lower", type: "quantitative", title: "CI low", format: ".4g" },
      { field: "upper", type: "quantitative", title: "CI high", format: ".4g" },
    ], ctx.d.title),
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

const CURVE_STYLE: Readonly<Record<string, readonly [number[], number]>> = {
  "ensemble MSD (survivors)": [[1, 0], 2],
  "guide ∝ t² (ballistic)": [[6, 4], 1.3],
  "guide ∝ t (diffusive)": [[2, 3], 1.3],
  "fit 2dDt + b over the window": [[10, 3, 2, 3], 3],
  "D(τ) = ⟨|Δr|²⟩/(2dτ)": [[1, 0], 2],
  "lag-estimator D": [[6, 4], 1.5],
};

/** strokeDash and strokeWidth encodings for the curve kinds present (legend: line styles). */
function curveStyle(kinds: readonly string[]) {
  const domain = Object.keys(CURVE_STYLE).filter((k) => kinds.includes(k));
  return {
    strokeDash: {
      field: "curve",
      type: "nominal",
      title: "line",
      scale: { domain, range: domain.map((k) => CURVE_STYLE[k][0]) },
      legend: domain.length < 2
        ? null
        : { symbolType: "stroke", symbolStrokeWidth: 2, symbolSize: 400, symbolStrokeColor: "#333" },
    },
    strokeWidth: {
      field: "curve",
      type: "ordinal",
      scale: { domain, range: domain.map((k) => CURVE_STYLE[k][1]) },
      legend: null,
    },
  };
}

function msdFitChart(ctx: Ctx): ChartSpec {
  const id = "msd-fit";
  const title = "MSD with guide lines and the fit window";
  type Row = { point: string; t: number; msd: number; curve: string; seg: string };
  const lines: Row[] = [];
  const windows: { point: string; t1: number; t2: number }[] = [];
  for (const p of ctx.points) {
    const r = p.rows.get("diffusion/D");
    const s = rec(rec(r?.detail.origin)?.curve);
    if (!r || !s) continue;
    const t = arr(s.x), m = arr(s.msd);
    let tMin = Infinity, tMax = 0;
    const data = "ensemble MSD (survivors)";
    t.forEach((tk, k) => {
      const v = m[k];
      if (typeof tk === "number" && tk > 0 && typeof v === "number" && v > 0) {
        lines.push({ point: p.name, t: tk, msd: v, curve: data, seg: `${p.name}|data` });
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
      const c = "guide ∝ t² (ballistic)";
      lines.push({ point: p.name, t: bt, msd: bm, curve: c, seg: `${p.name}|b` });
      lines.push({ point: p.name, t: t2, msd: bm * (t2 / bt) ** 2, curve: c, seg: `${p.name}|b` });
    }
    if (dt !== null && dm !== null) {
      const ta = Math.max(tMin, dt / 10), tb = Math.min(tMax, dt * 10);
      const c = "guide ∝ t (diffusive)";
      lines.push({ point: p.name, t: ta, msd: dm * (ta / dt), curve: c, seg: `${p.name}|d` });
      lines.push({ point: p.name, t: tb, msd: dm * (tb / dt), curve: c, seg: `${p.name}|d` });
    }
    const w = rec(r.detail.window);
    const t1 = num(w?.t1), t2 = num(w?.t2);
    const o = p.rows.get("diffusion/D_origin");
    const D = o?.value ?? null, bIntercept = num(rec(o?.detail.fitted)?.intercept);
    const d = num(r.detail.dimension) ?? 2;
    if (t1 !== null && t2 !== null) {
      windows.push({ point: p.name, t1, t2 });
      if (D !== null && bIntercept !== null) {
        for (const tt of [t1, Math.sqrt(t1 * t2), t2]) {
          const c = "fit 2dDt + b over the window";
          lines.push({
            point: p.name,
            t: tt,
            msd: 2 * d * D * tt + bIntercept,
            curve: c,
            seg: `${p.name}|fit`,
          });
        }
      }
    }
  }
  const caption = "Survivor-average MSD from t₀ (pairwise relative displacements, log–log), one colour per " +
    "point; line styles in the legend: the ∝ t² guide through the first value, the ∝ t guide at the window's " +
    "centre, and the fit 2dDt + b (only where the evidence shows a diffusive regime). Bars along the bottom: " +
    "each point's window [t₁, t₂] in its colour.";
  if (lines.length === 0) {
    return { id, title, caption, spec: null, emptyReason: "No stored MSD curve with positive values." };
  }
  const height = 340;
  const tx = timeAxis(ctx, Math.max(...lines.map((r) => r.t)));
  const ls = lengthScale(ctx.units, Math.sqrt(Math.max(...lines.map((r) => r.msd))));
  const f2 = ls.factor * ls.factor;
  const yUnit = squaredUnit(ls.unit) || "length²";
  const shown = lines.map((r) => ({ ...r, t: r.t * tx.s.factor, msd: r.msd * f2 }));
  const x = { field: "t", type: "quantitative", title: tx.title, scale: { type: "log", nice: false } };
  const layers: unknown[] = [{
    data: { name: "curves", values: shown },
    mark: { type: "line", tooltip: true },
    encoding: {
      x,
      y: { field: "msd", type: "quantitative", title: axisTitle("MSD", yUnit), scale: { type: "log" } },
      color: pointColourEncoding(ctx.view, true),
      detail: { field: "seg", type: "nominal" },
      ...curveStyle([...new Set(lines.map((r) => r.curve))]),
    },
  }];
  layers.push(...windowBars(ctx, windows, { height, time: tx.s }));
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height,
    layer: layers,
    config: { ...CONFIG, axisY: { labelExpr: DECADE_LABELS } },
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

function localSlopeChart(ctx: Ctx): ChartSpec {
  const id = "local-slope";
  const title = "Local slope α(t) = d ln MSD / d ln t";
  const rows: Record<string, unknown>[] = [];
  const windows: { point: string; t1: number; t2: number }[] = [];
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
        rows.push({ point: p.name, t: tk, alpha: a[k] });
      }
    });
    const w = rec(r.detail.window);
    const t1 = num(w?.t1), t2 = num(w?.t2);
    if (t1 !== null && t2 !== null) windows.push({ point: p.name, t1, t2 });
  }
  const caption = "Smoothed local exponent of the survivor-average MSD on a log grid: 2 = ballistic, " +
    `1 = diffusive (labelled grey lines). Grey band: the accepted range [${band[0]}, ${
      band[1]
    }]. Bars along ` +
    "the bottom: each point's window chosen from this curve (the cohort and lag exponents are in the evidence " +
    "table and the D(τ) chart).";
  if (rows.length === 0) return { id, title, caption, spec: null, emptyReason: "No stored local slope." };
  const height = 280;
  const tMax = Math.max(...rows.map((r) => r.t as number));
  const tx = timeAxis(ctx, tMax);
  const shown = rows.map((r) => ({ ...r, t: (r.t as number) * tx.s.factor }));
  const x = { field: "t", type: "quantitative", title: tx.title, scale: { type: "log", nice: false } };
  const layers: unknown[] = [
    {
      data: { name: "accepted band", values: [{ lo: band[0], hi: band[1] }] },
      mark: { type: "rect", color: "#999999", opacity: 0.15 },
      encoding: { y: { field: "lo", type: "quantitative" }, y2: { field: "hi" } },
    },
    {
      data: {
        name: "reference exponents",
        values: [{ a: 1, text: "diffusive" }, { a: 2, text: "ballistic" }],
      },
      layer: [
        { mark: { type: "rule", color: "#888888", strokeDash: [4, 3] } },
        {
          mark: { type: "text", align: "left", dx: 4, dy: -7, color: "#555555", fontSize: 11 },
          encoding: { text: { field: "text" }, x: { value: 0 } },
        },
      ],
      encoding: { y: { field: "a", type: "quantitative" } },
    },
  ];
  layers.push({
    data: { name: "local exponent", values: shown },
    mark: { type: "line", strokeWidth: 2, point: { filled: true, size: 20 }, tooltip: true },
    encoding: {
      x,
      y: { field: "alpha", type: "quantitative", title: "α(t)", scale: { domain: [0, 2.5], clamp: true } },
      color: pointColourEncoding(ctx.view, true),
    },
  });
  layers.push(...windowBars(ctx, windows, { height, time: tx.s }));
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height,
    layer: layers,
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

/** D(τ) = MSD(τ)/(2dτ) of the lag increments: flat for diffusion. */
function lagChart(ctx: Ctx): ChartSpec {
  const id = "lag-d";
  const title = "Lag increments: D(τ) = ⟨|Δr(τ)|²⟩/(2dτ)";
  const rows: { point: string; tau: number; D: number; curve: string; seg: string }[] = [];
  const ranges: { point: string; t1: number; t2: number }[] = [];
  for (const p of ctx.points) {
    const r = p.rows.get("diffusion/D_lag");
    const dx = rec(r?.detail.Dx);
    if (!r || !dx) continue;
    const x = arr(dx.x), D = arr(dx.D);
    const c = "D(τ) = ⟨|Δr|²⟩/(2dτ)";
    x.forEach((tau, q) => {
      if (typeof tau === "number" && tau > 0 && typeof D[q] === "number") {
        rows.push({ point: p.name, tau, D: (D[q] as number) * ctx.d.factor, curve: c, seg: `${p.name}|D` });
      }
    });
    const ex = rec(r.detail.exponent);
    const from = num(ex?.from), to = num(ex?.to);
    if (from !== null && to !== null) {
      ranges.push({ point: p.name, t1: from, t2: to });
      if (r.value !== null) {
        const c2 = "lag-estimator D";
        for (const tau of [from, to]) {
          rows.push({ point: p.name, tau, D: r.value * ctx.d.factor, curve: c2, seg: `${p.name}|fit` });
        }
      }
    }
  }
  const caption =
    "For diffusion D(τ) is flat beyond the correlation time; growth with τ means displacements " +
    "grow faster than the lag (superdiffusion), whatever a fit from t₀ says. Bars along the bottom: the lags " +
    "judged for each point (3τ_c to ½(t₂ − t₁)); dashed: the lag estimator's D where the regime is declared.";
  if (rows.length === 0) {
    return {
      id,
      title,
      caption,
      spec: null,
      emptyReason: "No lag estimator is stored (no window was found, or the frames are unequal in time).",
    };
  }
  const height = 260;
  const tx = timeAxis(ctx, Math.max(...rows.map((r) => r.tau)), "lag τ");
  const shown = rows.map((r) => ({ ...r, tau: r.tau * tx.s.factor }));
  const yTitle = ctx.d.title === "D/κ" ? "D(τ)/κ" : ctx.d.title.replace(/^D/, "D(τ)");
  const layers: unknown[] = [{
    data: { name: "lag D", values: shown },
    mark: { type: "line", point: { filled: true, size: 18 }, tooltip: true },
    encoding: {
      x: { field: "tau", type: "quantitative", title: tx.title, scale: { type: "log", nice: false } },
      y: {
        field: "D",
        type: "quantitative",
        title: yTitle,
        axis: numberFormat(Math.max(...shown.map((r) => Math.abs(r.D)))),
      },
      color: pointColourEncoding(ctx.view, true),
      detail: { field: "seg", type: "nominal" },
      ...curveStyle([...new Set(rows.map((r) => r.curve))]),
    },
  }];
  layers.push(...windowBars(ctx, ranges, { height, time: tx.s, label: "lags judged" }));
  const spec = {
    $schema: SCHEMA,
    width: ctx.width,
    height,
    layer: layers,
    config: CONFIG,
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

/** Bins beyond the last one holding ≥ 2 % of the peak density (data or model) are not drawn. */
const PROFILE_TAIL = 0.02;

function vinenChart(ctx: Ctx): ChartSpec {
  const id = "vinen-fit";
  const title = "Vinen-equation fit against the radial profiles";
  const rows: {
    panel: string;
    t: number;
    r: number;
    data: number | null;
    model: number | null;
    fit: string | null;
  }[] = [];
  const panels: string[] = [];
  let reason = "No Vinen fit is stored (run spindrift analyse).";
  let dimension = 2;
  let cut = 0;
  let fromWindow = true;
  for (const p of ctx.points) {
    const r = p.rows.get("vinen/D");
    if (!r) continue;
    const prof = rec(r.detail.profiles);
    if (!prof) {
      reason = `No Vinen fit: ${str(r.detail.reason) ?? "not available"}.`;
      continue;
    }
    dimension = num(p.rows.get("diffusion/D")?.detail.dimension) ?? dimension;
    if (rec(r.detail.window)?.fromDiffusionWindow === false) fromWindow = false;
    const chi = num(r.detail.reducedChi2);
    const panel = p.name;
    const fit = `reduced χ² = ${chi === null ? "—" : formatNumber(chi)}${
      str(r.detail.status) === "rejected" ? ": rejected" : str(r.detail.status) === "ok" ? ": fits" : ""
    }`;
    panels.push(panel);
    const rr = arr(prof.r);
    const curves = arr(prof.curves).map(rec).filter((c): c is NonNullable<typeof c> => c !== null);
    let peak = 0;
    for (const c of curves) {
      for (const v of [...arr(c.mean), ...arr(c.model)]) if (typeof v === "number") peak = Math.max(peak, v);
    }
    let last = 0;
    rr.forEach((_, k) => {
      for (const c of curves) {
        const a = arr(c.mean)[k], b = arr(c.model)[k];
        if (
          (typeof a === "number" && a >= PROFILE_TAIL * peak) ||
          (typeof b === "number" && b >= PROFILE_TAIL * peak)
        ) {
          last = Math.max(last, k);
        }
      }
    });
    cut = Math.max(cut, rr.length - 1 - (last + 1));
    for (const c of curves) {
      const t = num(c.t);
      if (t === null) continue;
      const mean = arr(c.mean), model = arr(c.model);
      rr.forEach((rk, k) => {
        if (typeof rk !== "number" || k > last + 1) return;
        rows.push({
          panel,
          t,
          r: rk,
          data: typeof mean[k] === "number" ? mean[k] as number : null,
          model: typeof model[k] === "number" ? model[k] as number : null,
          // The goodness of fit, drawn once per panel (on its first row).
          fit: rows.some((x) => x.panel === panel) ? null : fit,
        });
      });
    }
  }
  const caption = "Dots: ensemble-mean radial density of the main cluster (common bins); lines: the fitted " +
    "Vinen-equation model at the same times. The earliest time is the start of the fit (the window's t₁" +
    `${fromWindow ? "" : ", or the first frame where no window was found"}), whose measured profile is the ` +
    "model's initial condition; then a third, two thirds and the end of the fit. Each panel shows its reduced " +
    "χ² (the fit is rejected above 2; the model is drawn for rejected fits too, to show where it fails)." +
    (cut > 0
      ? ` Outer bins holding less than ${100 * PROFILE_TAIL} % of the peak density are not drawn.`
      : "");
  if (rows.length === 0) return { id, title, caption, spec: null, emptyReason: reason };
  const ls = lengthScale(ctx.units, Math.max(...rows.map((r) => r.r)));
  const tx = timeAxis(ctx, Math.max(...rows.map((r) => r.t)), "time");
  // Density: 2D vortices per area, 3D line length per volume; both length⁻² (scaled with the length unit).
  const dScale = 1 / (ls.factor * ls.factor);
  const lu = ls.unit === "" ? "length" : ls.unit;
  const yTitle = `${dimension === 3 ? "line density L" : "vortex density n"} [${
    /^[^\s()]+$/.test(lu) ? lu : `(${lu})`
  }⁻²]`;
  const shown = rows.map((r) => ({
    ...r,
    t: r.t * tx.s.factor,
    r: r.r * ls.factor,
    data: r.data === null ? null : r.data * dScale,
    model: r.model === null ? null : r.model * dScale,
  }));
  const yMax = Math.max(...shown.map((r) => Math.max(r.data ?? 0, r.model ?? 0)));
  const n = panels.length;
  const panelWidth = Math.max(200, Math.floor((ctx.width - 40 * (Math.min(3, n) - 1)) / Math.min(3, n)));
  const spec = {
    $schema: SCHEMA,
    data: { name: "profiles", values: shown },
    facet: { field: "panel", type: "nominal", title: null, sort: panels },
    columns: Math.min(3, n),
    spec: {
      width: panelWidth,
      height: 220,
      encoding: {
        x: { field: "r", type: "quantitative", title: axisTitle("r", lu) },
        // Time as a sequential colour (points of a sweep have different fit windows, so a shared ordinal legend
        // would pair unrelated times).
        color: {
          field: "t",
          type: "quantitative",
          title: tx.title,
          scale: { scheme: "viridis", reverse: true },
        },
        detail: { field: "t", type: "quantitative" },
      },
      layer: [
        {
          mark: { type: "point", filled: true, size: 28 },
          encoding: { y: { field: "data", type: "quantitative", title: yTitle, axis: numberFormat(yMax) } },
        },
        {
          mark: { type: "line", strokeWidth: 2, invalid: "break-paths-filter-domains" },
          encoding: { y: { field: "model", type: "quantitative", title: yTitle } },
        },
        {
          transform: [{ filter: "datum.fit != null" }],
          mark: { type: "text", align: "right", baseline: "top", fontSize: 12, fontWeight: 600 },
          encoding: {
            text: { field: "fit" },
            x: { value: panelWidth - 6 },
            y: { value: 6 },
            color: { value: "#333333" },
          },
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
  const rows: { point: string; r: number; value: number; curve: string }[] = [];
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
      if (typeof f[k] === "number") {
        rows.push({ point: p.name, r: x, value: f[k] as number, curve: CURVES[0] });
      }
      if (typeof g[k] === "number") {
        rows.push({ point: p.name, r: x, value: g[k] as number, curve: CURVES[1] });
      }
    });
    const fg = rec(r.detail.fFromG);
    const fr = arr(fg?.r), ff = arr(fg?.f);
    fr.forEach((x, k) => {
      if (typeof x === "number" && typeof ff[k] === "number") {
        rows.push({ point: p.name, r: x, value: ff[k] as number, curve: CURVES[2] });
      }
    });
  }
  const caption = "Two-point correlations of the velocity at probe points in the main cluster (probes near " +
    "vortex cores excluded), normalised by u′²: f longitudinal (solid), g transverse (dashed), and the f that " +
    "g implies for an isotropic incompressible field (g = f + r f′ in 2D; dotted). Point-vortex fields have " +
    "heavy velocity tails, so values above 1 at small r are expected.";
  if (rows.length === 0) return { id, title, caption, spec: null, emptyReason: reason };
  const ls = lengthScale(ctx.units, Math.max(...rows.map((r) => r.r)));
  const shown = rows.map((r) => ({ ...r, r: r.r * ls.factor }));
  const panels = ctx.view.names.filter((n) => rows.some((r) => r.point === n));
  const n = panels.length;
  // Colour and dash both encode the curve under the same title, so Vega-Lite draws one legend with both.
  const curve = { field: "curve", type: "nominal", title: "curve", scale: { domain: [...CURVES] } };
  const spec = {
    $schema: SCHEMA,
    data: { name: "correlations", values: shown },
    facet: { field: "point", type: "nominal", title: null, sort: panels },
    columns: Math.min(3, n),
    spec: {
      width: Math.max(200, Math.floor((ctx.width - 40 * (Math.min(3, n) - 1)) / Math.min(3, n))),
      height: 220,
      mark: { type: "line", strokeWidth: 2, point: { size: 16 } },
      encoding: {
        x: { field: "r", type: "quantitative", title: axisTitle("r", ls.unit || "length") },
        y: { field: "value", type: "quantitative", title: "correlation" },
        color: { ...curve, scale: { ...curve.scale, range: ["#1f4e79", "#c0504d", "#6b6b6b"] } },
        strokeDash: { ...curve, scale: { ...curve.scale, range: [[1, 0], [6, 4], [2, 2]] } },
      },
    },
    config: {
      ...CONFIG,
      legend: { ...CONFIG.legend, symbolType: "stroke", symbolStrokeWidth: 2, symbolSize: 400 },
    },
  } as unknown as TopLevelSpec;
  return { id, title, caption, spec, emptyReason: null };
}

const CURVES = ["f (longitudinal)", "g (transverse)", "f implied by g (isotropy)"] as const;
