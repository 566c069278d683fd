/**
 * `spindrift analyse`: a thin wrapper that parse option values, call the library and
 * turn its errors into one-line messages (`UserError`). `analyseAndReport` is what `spindrift demo` calls to
 * end with the analysis in its report.
 *
 * @example
 * ```ts
 * const lines = await analyseCommand("runs/film.sqlite", { replicates: 2000, chi2: "0.3" });
 * lines.forEach((l) => console.log(l));
 * ```
 */
import {
  analyseStudy,
  AnalysisInputError,
  type AnalysisSummary,
  chi2FromDecayStudy,
  type Estimate,
  type EvaporationAnalysis,
} from "../analysis/mod.ts";
import type { EvaporationEstimate } from "../analysis/estimators/mod.ts";
import { StoreReadError } from "../store/reads.ts";
import { writeReport } from "../reports/mod.ts";
import { formatNumber } from "../reports/html.ts";
import { UserError } from "./errors.ts";

/** Option values as the command line gives them (strings are parsed here). */
export interface AnalyseCommandOptions {
  readonly replicates?: number;
  readonly seed?: string;
  readonly chi2?: string;
  /** Database of a homogeneous decay study to estimate χ₂ from (instead of `chi2`). */
  readonly chi2From?: string;
  readonly chi2Range?: string;
  readonly vinenReplicates?: number;
  readonly sensitivity?: boolean;
  readonly correlations?: boolean;
  readonly study?: number;
  /** Progress lines on standard error (default false). */
  readonly verbose?: boolean;
}

function parseChi2(v: string | undefined): number | undefined {
  if (v === undefined) return undefined;
  const x = Number(v);
  if (v.trim() === "" || !Number.isFinite(x) || x < 0) {
    throw new UserError(`--chi2 must be a number ≥ 0, got '${v}'`, "χ₂ comes from a homogeneous decay study");
  }
  return x;
}

function parseRange(v: string | undefined): [number, number] | undefined {
  if (v === undefined) return undefined;
  const parts = v.split(",").map((s) => Number(s.trim()));
  if (parts.length !== 2 || !parts.every(Number.isFinite) || !(parts[0] >= 0 && parts[1] > parts[0])) {
    throw new UserError(`--chi2-range must be 'low,high' with 0 ≤ low < high, got '${v}'`);
  }
  return [parts[0], parts[1]];
}

/** Library errors the user can act on, as UserErrors; everything else passes through. */
export function userFacing(e: unknown, dbPath: string): unknown {
  if (e instanceof StoreReadError) {
    return new UserError(e.message, `is ${dbPath} a database written by 'spindrift run'?`);
  }
  if (e instanceof AnalysisInputError) return new UserError(e.message);
  return e;
}

/** Runs the analysis and returns the lines to print (a table of D/κ per point). */
export async function analyseCommand(dbPath: string, o: AnalyseCommandOptions): Promise<string[]> {
  let summary: AnalysisSummary;
  const head: string[] = [];
  if (o.chi2 !== undefined && o.chi2From !== undefined) {
    throw new UserError("give either --chi2 or --chi2-from, not both");
  }
  let chi2 = parseChi2(o.chi2);
  let chi2Interval = parseRange(o.chi2Range);
  if (o.chi2From !== undefined) {
    try {
      const est = chi2FromDecayStudy(o.chi2From, { seed: o.seed });
      chi2 = est.chi2;
      chi2Interval ??= est.interval ? [est.interval[0], est.interval[1]] : undefined;
      head.push(est.source);
    } catch (e) {
      throw userFacing(e, o.chi2From);
    }
  }
  try {
    summary = await analyseStudy(dbPath, {
      studyId: o.study,
      seed: o.seed,
      replicates: o.replicates,
      chi2,
      chi2Interval,
      vinenReplicates: o.vinenReplicates,
      sensitivity: o.sensitivity,
      correlations: o.correlations,
      onProgress: o.verbose ? (m) => console.error(m) : undefined,
    });
  } catch (e) {
    throw userFacing(e, dbPath);
  }
  return [...head, ...formatSummary(summary, dbPath)];
}

function estimateText(e: Estimate): string {
  if (e.status === "no-diffusive-regime") return `no diffusive regime: ${e.reason ?? ""}`;
  if (e.value === null) return `${e.status}${e.reason ? `: ${e.reason}` : ""}`;
  const ci = e.lower !== null && e.upper !== null
    ? ` [${formatNumber(e.lower)}, ${formatNumber(e.upper)}]`
    : " (no interval)";
  return `${formatNumber(e.value)}${ci}${
    e.status === "error" && e.reason ? ` (unreliable: ${e.reason})` : ""
  }`;
}

/** "; bootstrap: 21 % of replicates without a window (left out)" when some replicates found no regime. */
function noRegimeText(fraction: number | null): string {
  return fraction !== null && fraction > 0
    ? `; bootstrap: ${Math.round(fraction * 100)} % of replicates found no window (left out of the interval)`
    : "";
}

/** "value [lower, upper]" of an evaporation estimate, or "—". */
function evText(e: EvaporationEstimate | null, scale = 1): string {
  if (e === null || e.value === null) return "—";
  const ci = e.interval
    ? ` [${formatNumber(scale * e.interval.lower)}, ${formatNumber(scale * e.interval.upper)}]`
    : "";
  return `${formatNumber(scale * e.value)}${ci}`;
}

/** One line on evaporation and losses, or null when not computed. */
function evaporationText(e: EvaporationAnalysis): string | null {
  if (e.status !== "ok") return e.status === "error" ? `evaporation: error: ${e.reason}` : null;
  const lost = e.lostFraction?.value !== null && e.lostFraction
    ? `; lost by the end: ${evText(e.lostFraction, 100)} % of the ${
      e.objects === "loops" ? "line length (negative: it grew)" : "vortices"
    }`
    : "";
  const half = e.tHalf?.value !== null && e.tHalf
    ? `, t½ = ${evText(e.tHalf)}, rate ${evText(e.rate)} per unit time`
    : "";
  return `evaporated ${e.objects} by t = ${formatNumber(e.tEnd ?? Number.NaN)}: ${
    evText(e.evaporated)
  }${half}${lost}`;
}

/** The printed summary: per point D/κ (MSD) with its interval or the reason, D_R and the Vinen D. */
export function formatSummary(s: AnalysisSummary, dbPath: string): string[] {
  const lines = [
    `study ${s.studyName} (revision #${s.studyId}), ${s.dimension}D; bootstrap B = ${s.replicates}, ` +
    `seed base ${s.seedBase.length > 24 ? `${s.seedBase.slice(0, 16)}…` : s.seedBase}`,
  ];
  const w = Math.max(5, ...s.points.map((p) => p.label.length));
  lines.push(`  ${"point".padEnd(w)}  ${"n".padStart(3)}  D/κ (MSD) [95% CI]`);
  for (const p of s.points) {
    lines.push(`  ${p.label.padEnd(w)}  ${String(p.realisations).padStart(3)}  ${estimateText(p.msd)}`);
    const pad = " ".repeat(w + 7);
    if (p.msd.window) {
      lines.push(
        `${pad}window [${formatNumber(p.msd.window.t1)}, ${formatNumber(p.msd.window.t2)}], τ_c = ${
          p.msd.tauC === null ? "—" : formatNumber(p.msd.tauC)
        }${noRegimeText(p.msd.noRegimeFraction)}`,
      );
    }
    for (const w of p.msd.warnings) lines.push(`${pad}warning: ${w}`);
    if (p.radius.value !== null) lines.push(`${pad}D_R/κ (R_rms): ${estimateText(p.radius)}`);
    if (p.vinen.status !== "not-available") lines.push(`${pad}D/κ (Vinen): ${estimateText(p.vinen)}`);
    const ev = evaporationText(p.evaporation);
    if (ev) lines.push(`${pad}${ev}`);
  }
  const vinenMissing = s.points.find((p) => p.vinen.status === "not-available");
  if (vinenMissing?.vinen.reason) lines.push(`Vinen fit: ${vinenMissing.vinen.reason}`);
  lines.push(`${s.rowsWritten} rows stored in ensemble_results of ${dbPath}`);
  lines.push(`next: spindrift report ${dbPath}`);
  return lines;
}

/**
 * Analyses a study database and writes its report with the "Answers" section (what `spindrift demo` runs
 * after the study).
 *
 * @example
 * ```ts
 * const { summary, html } = await analyseAndReport("out/demo/film-patch.sqlite", { out: "out/demo/film-patch.html" });
 * ```
 */
export async function analyseAndReport(
  dbPath: string,
  o: AnalyseCommandOptions & { readonly out?: string },
): Promise<{ lines: string[]; html: string; svgDir: string }> {
  const lines = await analyseCommand(dbPath, o);
  const res = await writeReport(dbPath, { out: o.out, studyId: o.study });
  return { lines, html: res.html, svgDir: res.svgDir };
}

/** Parser of a bootstrap replicate count: 0 (no interval) or a whole number ≥ 2. */
export function replicateCount(flag: string): (v: string) => number {
  return (v: string): number => {
    const n = Number(v);
    if (!Number.isInteger(n) || n < 0 || n === 1) {
      throw new UserError(`${flag} must be 0 or a whole number ≥ 2, got '${v}'`);
    }
    return n;
  };
}
