/**
 * The answer first: the block at the top of a report page that a group meeting reads in ten seconds. The
 * study's question; the answer to it (differences or trend of D between points, with intervals, as the analysis
 * stored them); each point's D/κ big with its interval (and D in m²/s for physical-unit studies), or "no
 * diffusive regime" and why in one line; then the caveats in words: no regime, a rejected Vinen fit, low window
 * support, few realisations, an unfinished run or failures, an out-of-date analysis.
 *
 * Built from the same stored rows as the Answers section (numbers carry `data-value` at full precision).
 *
 * @example
 * ```ts
 * const html = buildSummary(agg, readEnsembleResults(db, agg.study.id), { units });
 * ```
 */
import type { EnsembleResult } from "../store/ensemble.ts";
import { fewRealisationsWarning, MIN_REALISATIONS } from "../analysis/estimators/bootstrap.ts";
import type { StudyAggregate } from "./aggregate.ts";
import { escapeHtml, formatNumber } from "./format.ts";
import type { ReportUnits } from "./quantities.ts";
import {
  groupResults,
  levelOf,
  num,
  pct,
  type PointRows,
  str,
  strings,
  valueSpan,
  withNames,
} from "./_results.ts";
import { type ChartOptions, chartUnits, pointView } from "./specs.ts";

/** A provisional analysis of an unfinished run (computed for the page, not stored). */
export interface ProvisionalAnalysis {
  /** When it was computed (ISO time). */
  readonly computedAt: string;
  /** Bootstrap replicates used. */
  readonly replicates: number;
}

export interface SummaryOptions extends ChartOptions {
  readonly dbPath?: string;
  /** Set when the results were computed for this page from an unfinished run. */
  readonly provisional?: ProvisionalAnalysis;
}

/** The summary block (escaped HTML, a `<section id="summary">`). */
export function buildSummary(
  agg: StudyAggregate,
  results: readonly EnsembleResult[],
  opts: SummaryOptions = {},
): string {
  const view = pointView(agg);
  const points = groupResults(agg, results, view);
  const units = chartUnits(opts);
  const level = levelOf(points);
  const totals = countTotals(agg);
  const s = agg.study;
  const parts: string[] = [];
  if (totals.unfinished > 0) parts.push(unfinishedBanner(totals, opts.provisional));
  parts.push(
    `<p class="question-label">The question</p><p class="description">${
      escapeHtml(s.description.trim()) || "<em>(the study gives no description)</em>"
    }</p>`,
  );
  if (results.length === 0) {
    parts.push(
      `<div class="answer-box" id="answer-headline"><p class="verdict">No analysis is stored yet: run ` +
        `<code>${escapeHtml(`spindrift analyse ${opts.dbPath ?? "DATABASE"}`)}</code> and write the report ` +
        `again to see D/κ with its interval here.</p></div>`,
    );
  } else {
    const verdict = points.map((p) => p.rows.get("question/verdict")).find((r) => r !== undefined);
    const lines = strings(verdict?.detail.lines).map((l) => withNames(l, points));
    parts.push(
      `<div class="answer-box" id="answer-headline">${
        lines.length > 0
          ? `<p class="question-label">The answer</p>${
            lines.map((l) => `<p class="verdict">${escapeHtml(l)}</p>`).join("")
          }`
          : ""
      }<div class="cards">${points.map((p) => card(p, units, level)).join("")}</div></div>`,
    );
  }
  const caveats = caveatList(agg, points, totals);
  if (caveats.length > 0) {
    parts.push(
      `<div class="caveats" id="caveats"><p class="question-label">Read with care</p><ul>${
        caveats.map((c) => `<li>${escapeHtml(c)}</li>`).join("")
      }</ul></div>`,
    );
  }
  parts.push(tiles(agg, totals));
  return `<section id="summary"><h2>Summary</h2>${parts.join("\n")}</section>\n`;
}

interface Totals {
  planned: number | null;
  done: number;
  failed: number;
  running: number;
  missing: number;
  /** Planned realisations not done: running, missing or failed. */
  unfinished: number;
}

/** Realisations of the study revision by status. */
export function countTotals(agg: StudyAggregate): Totals {
  let done = 0, failed = 0, running = 0, missing = 0;
  for (const p of agg.points) {
    done += p.counts.done;
    failed += p.counts.failed;
    running += p.counts.running;
    missing += p.counts.missing ?? 0;
  }
  const planned = agg.overview.realisations === null ? null : agg.overview.realisations * agg.points.length;
  return { planned, done, failed, running, missing, unfinished: running + missing };
}

function unfinishedBanner(t: Totals, provisional: ProvisionalAnalysis | undefined): string {
  return `<div class="unfinished" id="run-unfinished"><strong>The run is unfinished:</strong> ${t.done} of ${
    t.planned ?? "?"
  } realisations done${t.running > 0 ? `, ${t.running} running or interrupted` : ""}${
    t.missing > 0 ? `, ${t.missing} not started` : ""
  }. ${
    provisional
      ? `The numbers below are provisional: computed for this page at ${
        escapeHtml(provisional.computedAt)
      } from the done realisations (B = ${provisional.replicates}), not stored; they will change as ` +
        `realisations come in. Write the report again to update it, and run <code>spindrift analyse</code> ` +
        `when the run has finished.`
      : "Numbers on this page use the done realisations only and will change when the run goes on."
  }</div>`;
}

/** One point's card: its name, D big with the interval (D/κ and, in physical units, D), or why there is none. */
function card(p: PointRows, u: ReportUnits, level: number): string {
  const d = p.rows.get("diffusion/D");
  const head =
    `<div class="card" data-point="${escapeHtml(p.label)}" style="border-top-color: ${p.colour}">` +
    `<div class="name">${escapeHtml(p.name)}</div>`;
  const n = num(d?.detail.realisations) ?? p.done;
  const foot = `<div class="n">${n} realisations${
    num(d?.detail.support) !== null && d?.value !== null
      ? ` · window support ${formatNumber(100 * num(d!.detail.support)!)} %`
      : ""
  }</div></div>`;
  if (!d) return `${head}<div class="big none">not analysed</div>${foot}`;
  if (d.value === null) {
    const status = str(d.detail.status) ?? "not available";
    const why = str(d.detail.reason);
    return `${head}<div class="big none" data-status="${escapeHtml(status)}">${
      status === "no-diffusive-regime" ? "no diffusive regime" : escapeHtml(status)
    }</div>${why ? `<p class="why">${escapeHtml(why)}</p>` : ""}${foot}`;
  }
  const ci = (scale: number) =>
    d.lower !== null && d.upper !== null
      ? ` <span class="ci">[${valueSpan("lower", d.lower, scale)}, ${
        valueSpan("upper", d.upper, scale)
      }]</span>`
      : ` <span class="ci">(no interval)</span>`;
  const lvl = `<span class="lvl">${pct(level)} interval</span>`;
  if (u.kappaUnits) {
    return `${head}<div class="big"><span class="sym">ν′ = D/κ =</span> ${valueSpan("value", d.value)}${
      ci(1)
    }</div>${lvl}${foot}`;
  }
  const si = `${formatNumber(d.value)}${
    d.lower !== null && d.upper !== null ? ` [${formatNumber(d.lower)}, ${formatNumber(d.upper)}]` : ""
  } ${u.dUnit ?? ""}`;
  if (u.kappa === undefined) {
    return `${head}<div class="big"><span class="sym">D =</span> ${valueSpan("value", d.value)}${ci(1)} ${
      escapeHtml(u.dUnit ?? "")
    }</div>${lvl}<p class="why">D/κ: κ was not recorded with this study</p>${foot}`;
  }
  return `${head}<div class="big"><span class="sym">ν′ = D/κ =</span> ${
    valueSpan("value", d.value, 1 / u.kappa)
  }${ci(1 / u.kappa)}</div><div class="si">D = ${escapeHtml(si)}</div>${lvl}${foot}`;
}

/** The caveats that qualify the numbers, in words. */
function caveatList(agg: StudyAggregate, points: readonly PointRows[], t: Totals): string[] {
  const out: string[] = [];
  const noRegime = points.filter((p) => {
    const d = p.rows.get("diffusion/D");
    return d !== undefined && d.value === null;
  });
  if (noRegime.length > 0) {
    out.push(
      `No diffusive regime at ${noRegime.map((p) => p.name).join(", ")}, so no ν′ is given there (why: on ` +
        `each point above; the evidence is under Answers). A number fitted anyway would describe the ` +
        `estimator, not diffusion.`,
    );
  }
  for (const p of points) {
    const ll = p.rows.get("diffusion/D_lag_loss_limited");
    if (ll?.value != null) {
      out.push(
        `${p.name}: the main cluster halves too early for a full window; the lag estimator over the short ` +
          `window gives D = ${formatNumber(ll.value)}${
            ll.lower !== null && ll.upper !== null
              ? ` [${formatNumber(ll.lower)}, ${formatNumber(ll.upper)}]`
              : ""
          } (loss-limited, not the answer).`,
      );
    }
  }
  const rejected = points.filter((p) => str(p.rows.get("vinen/D")?.detail.status) === "rejected");
  if (rejected.length > 0) {
    out.push(
      `The Vinen-equation fit does not fit the profiles at ${
        rejected.map((p) => p.name).join(", ")
      } (reduced χ² ${
        rejected.map((p) => formatNumber(num(p.rows.get("vinen/D")?.detail.reducedChi2) ?? Number.NaN)).join(
          ", ",
        )
      }, rejected above 2), so it gives no D there.`,
    );
  }
  const weak = points.filter((p) => {
    const d = p.rows.get("diffusion/D");
    const s = num(d?.detail.support);
    return d?.value != null && s !== null && s < 0.9;
  });
  for (const p of weak) {
    out.push(
      `Low window support at ${p.name}: only ${
        formatNumber(100 * num(p.rows.get("diffusion/D")!.detail.support)!)
      } % of the bootstrap resamples find a diffusive window of their own; the regime is marginal.`,
    );
  }
  const few = agg.points.filter((p) => p.counts.done < MIN_REALISATIONS);
  if (few.length > 0) {
    const n = Math.min(...few.map((p) => p.counts.done));
    out.push(
      `Few realisations: ${
        few.length === agg.points.length ? "every point has" : `${few.length} point(s) have`
      } fewer than ${MIN_REALISATIONS} done (as few as ${n}); ${
        fewRealisationsWarning(n).replace(/^only \d+ realisations: /, "")
      }.`,
    );
  }
  if (t.failed > 0) {
    out.push(`${t.failed} realisation(s) failed (see Failures); the numbers use the done ones only.`);
  }
  const stale = points.filter((p) => {
    const n = num(p.rows.get("diffusion/D")?.detail.realisations);
    return n !== null && n !== p.done;
  });
  if (stale.length > 0 && t.unfinished === 0) {
    out.push(
      `The stored analysis is out of date for ${
        stale.map((p) => p.name).join(", ")
      } (it used another number ` +
        `of realisations than are done now): run spindrift analyse again.`,
    );
  }
  return out;
}

function tiles(agg: StudyAggregate, t: Totals): string {
  const tile = (value: string, label: string, cls = "") =>
    `<div class="tile ${cls}"><span class="v">${escapeHtml(value)}</span><span class="l">${
      escapeHtml(label)
    }</span></div>`;
  return `<div class="tiles">
${tile(String(agg.points.length), agg.points.length === 1 ? "parameter point" : "parameter points")}
${tile(`${t.done}${t.planned !== null ? ` / ${t.planned}` : ""}`, "realisations done")}
${tile(String(t.failed), "failed", t.failed > 0 ? "bad" : "")}
${tile(String(t.running), "unfinished", t.running > 0 ? "warn" : "")}
${t.missing ? tile(String(t.missing), "not run yet", "warn") : ""}
</div>`;
}
