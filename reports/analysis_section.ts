/**
 * The report's "Answers" section, built from the stored ensemble results (`ensemble_results`, written by
 * `spindrift analyse`): D/κ with its interval per parameter point (table) and versus the swept parameter
 * (chart with error bars), the three estimates side by side (MSD, RMS radius, Vinen fit), the MSD on log–log
 * axes with ballistic (∝ t²) and diffusive (∝ t) guide lines and the fit window, the local slope α(t), the
 * threshold-sensitivity table, the Vinen fit against the measured profiles, the χ₂ sensitivity and the
 * velocity correlations.
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
import { diffusionHeading, diffusionUnit } from "../engines/units.ts";

/** A piece of the section: HTML (already escaped) or a chart. */
export type AnalysisPart = { readonly html: string } | { readonly chart: ChartSpec };

export interface AnalysisSection {
  readonly parts: readonly AnalysisPart[];
  /** The charts among the parts, in order. */
  readonly charts: readonly ChartSpec[];
  /** True when the database holds ensemble results for this study revision. */
  readonly present: boolean;
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
  { analysis: "msd-fit", name: "D", label: "MSD fit (D)" },
  { analysis: "rms-fit", name: "D_R", label: "RMS-radius growth (D_R)" },
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
    vinenChart(ctx),
    corrChart(ctx),
  ];
  const [dChart, msdChart, slopeChart, vChart, cChart] = charts;
  const parts: AnalysisPart[] = [
    { html: staleNote(ctx) + intro(ctx) + diffusionTable(ctx) },
    { chart: dChart },
    { chart: msdChart },
    { chart: slopeChart },
    { html: sensitivityTable(ctx) },
    { html: evaporationTable(ctx) },
    { chart: vChart },
    { html: chi2Table(ctx) },
    { chart: cChart },
  ];
  return { present: true, parts, charts };
}

interface Ctx {
  readonly points: readonly PointRows[];
  readonly opts: ChartOptions;
  readonly width: number;
  readonly level: number;
}

function levelOf(points: readonly PointRows[]): number {
  for (const p of points) {
    const l = p.rows.get("msd-fit/D")?.detail.level;
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
    const n = num(p.rows.get("msd-fit/D")?.detail.realisations);
    return n !== null && n !== p.done;
  });
  if (stale.length === 0) return "";
  return `<p class="errors-inline warn" id="analysis-stale">The analysis is out of date for ${
    stale.map((p) => escapeHtml(p.label)).join(", ")
  }: it used a different number of done realisations than the database now holds. Run ` +
    `<code>spindrift analyse</code> again.</p>`;
}

function intro(ctx: Ctx): string {
  const first = ctx.points.find((p) => p.rows.has("msd-fit/D"))?.rows.get("msd-fit/D");
  const d = first?.detail ?? {};
  const B = num(d.replicates);
  const computed = first?.computedAt ?? "";
  const units = ctx.opts.units;
  return `<p class="note">Three estimates of the effective diffusion coefficient ν′ of the main cluster: ` +
    `D from the mean-square displacement MSD = 2dDt + b over an automatically chosen ` +
    `window (crossover τ_c = first t with local slope α &lt; 1.2; window from 3τ_c while α stays in ` +
    `[0.85, 1.15], t₂/t₁ ≥ 5, main cluster ≥ 50 % of its size at t₁), ${
      pct(ctx.level)
    } intervals by bootstrap over ` +
    `realisations${
      B !== null ? ` (B = ${B})` : ""
    }, seeds recorded per point. D_R from the growth of R²_rms ` +
    `over the same window; the Vinen-equation fit uses the radial profiles and a given χ₂. D is in ` +
    `length²/time of the study's units${
      units ? ` (${escapeHtml(units.length)}²/(${escapeHtml(units.time)}))` : ""
    }, ${
      diffusionUnit(units).unit === null
        ? "i.e. D/κ, since time is measured in ℓ²/κ"
        : `i.e. in ${escapeHtml(diffusionUnit(units).unit!)}: divide by κ for D/κ`
    }. Computed ${escapeHtml(computed)}.</p>`;
}

/** Share of bootstrap replicates in which the window rule found no diffusive regime (left out of the CI). */
function noRegimeNote(fraction: number | null): string {
  return fraction !== null && fraction > 0
    ? `<br><span class="no-regime">${Math.round(fraction * 100)} % of replicates without a window</span>`
    : "";
}

/** The fit's advice (few realisations, a marginal regime), one line each. */
function warningNotes(warnings: unknown): string {
  return arr(warnings).filter((w): w is string => typeof w === "string")
    .map((w) => `<br><span class="fit-warning">warning: ${escapeHtml(w)}</span>`).join("");
}

function diffusionTable(ctx: Ctx): string {
  const head = `<tr><th>point</th><th class="num">n</th>` +
    `<th>${escapeHtml(diffusionHeading(ctx.opts.units, "D", "MSD"))} [${pct(ctx.level)} CI]</th>` +
    `<th>${escapeHtml(diffusionHeading(ctx.opts.units, "D_R", "R_rms"))} [CI]</th>` +
    `<th>${escapeHtml(diffusionHeading(ctx.opts.units, "D", "Vinen"))} [CI]</th><th class="num">τ_c</th>` +
    `<th class="num">window t₁</th><th class="num">window t₂</th><th>interval, seed</th></tr>`;
  const body = ctx.points.map((p) => {
    const d = p.rows.get("msd-fit/D");
    const det = d?.detail ?? {};
    const seed = str(det.seed);
    const method = str(det.interval);
    return `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.label)}</td>` +
      `${numCell(num(det.realisations))}` +
      estimateCell(d, "msd-D") + estimateCell(p.rows.get("rms-fit/D_R"), "rms-D") +
      estimateCell(p.rows.get("vinen/D"), "vinen-D") +
      numCell(p.rows.get("msd-fit/tau_c")?.value ?? null) +
      numCell(p.rows.get("msd-fit/window_start")?.value ?? null) +
      numCell(p.rows.get("msd-fit/window_end")?.value ?? null) +
      `<td class="note">${escapeHtml(method ?? "—")}${
        num(det.replicates) ? `, B = ${num(det.replicates)}` : ""
      }${noRegimeNote(num(det.noRegimeFraction))}${warningNotes(det.warnings)}${
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

function chi2Table(ctx: Ctx): string {
  const withV = ctx.points.filter((p) => p.rows.get("vinen/D")?.value !== null && p.rows.has("vinen/D"));
  if (withV.length === 0) return "";
  const head =
    `<tr><th>point</th><th class="num">χ₂</th><th class="num">χ₂ low</th><th class="num">D(χ₂ low)</th>` +
    `<th class="num">D(χ₂)</th><th class="num">χ₂ high</th><th class="num">D(χ₂ high)</th><th class="num">∂D/∂χ₂</th></tr>`;
  const body = withV.map((p) => {
    const low = p.rows.get("vinen/D_chi2_low");
    const high = p.rows.get("vinen/D_chi2_high");
    return `<tr data-point="${escapeHtml(p.label)}"><td>${escapeHtml(p.label)}</td>` +
      numCell(p.rows.get("vinen/chi2")?.value ?? null) + numCell(num(low?.detail.chi2)) +
      numCell(low?.value ?? null) + numCell(p.rows.get("vinen/D")?.value ?? null) +
      numCell(num(high?.detail.chi2)) + numCell(high?.value ?? null) +
      numCell(p.rows.get("vinen/dD_dchi2")?.value ?? null) + `</tr>`;
  }).join("");
  return `<h3>Sensitivity of the Vinen D to χ₂</h3><p class="note">D is refitted with χ₂ at the ends of the ` +
    `given range (default [χ₂/2, 2χ₂]); D and χ₂ are strongly correlated, which is why χ₂ is fixed from a ` +
    `separate homogeneous decay study.</p><div class="scroll"><table class="analysis" id="chi2-table"><thead>` +
    `${head}</thead><tbody>${body}</tbody></table></div>`;
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
    const r = p.rows.get("msd-fit/D");
    const s = rec(r?.detail.series);
    if (!r || !s) continue;
    const t = arr(s.t), m = arr(s.msd);
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
    const D = r.value, bIntercept = num(r.detail.intercept), d = num(r.detail.dimension) ?? 2;
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
    "Count-weighted ensemble MSD as used by the fit (log–log). Dashed: ∝ t² through the first " +
    "value and ∝ t through the fitted line at the window's centre; shaded: the fit window [t₁, t₂]; thick " +
    "line: the fit 2dDt + b.";
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
    const r = p.rows.get("msd-fit/D");
    const s = rec(r?.detail.slope);
    if (!r || !s) continue;
    const stored = arr(rec(r.detail.rules)?.alphaBand);
    if (typeof stored[0] === "number" && typeof stored[1] === "number") band = [stored[0], stored[1]];
    const t = arr(s.t), a = arr(s.alpha);
    t.forEach((tk, k) => {
      if (typeof tk === "number" && tk > 0 && typeof a[k] === "number") {
        rows.push({ point: p.key, t: tk, alpha: a[k] });
      }
    });
    const w = rec(r.detail.window);
    if (num(w?.t1) !== null && num(w?.t2) !== null) windows.push({ point: p.key, t1: w!.t1, t2: w!.t2 });
  }
  const caption =
    "Smoothed local exponent on a log grid: 2 = ballistic, 1 = diffusive (grey lines). Band: the " +
    `accepted range [${band[0]}, ${band[1]}] inside the window; shaded per point: the chosen window.`;
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

function vinenChart(ctx: Ctx): ChartSpec {
  const id = "vinen-fit";
  const title = "Vinen-equation fit against the radial profiles";
  const rows: Record<string, unknown>[] = [];
  let reason = "No Vinen fit is stored (it needs χ₂: spindrift analyse DB --chi2 X).";
  for (const p of ctx.points) {
    const r = p.rows.get("vinen/D");
    if (!r) continue;
    if (r.value === null) {
      reason = `No Vinen fit: ${str(r.detail.reason) ?? "not available"}.`;
      continue;
    }
    const prof = rec(r.detail.profiles);
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
    "model at the same times. One panel per parameter point.";
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
