/**
 * `spindrift analyse`: a thin wrapper that parse option values, call the library and
 * turn its errors into one-line messages (`UserError`). `analyseAndReport` is what `spindrift demo` calls to
 * end with the analysis in its report.
 *
 * @example
 * ```ts
 * const { lines, errors } = await analyseCommand("runs/film.sqlite", { replicates: 2000, chi2: "0.3" });
 * lines.forEach((l) => console.log(l));
 * if (errors.length > 0) Deno.exitCode = 1;
 * ```
 */
import {
  analyseStudy,
  AnalysisInputError,
  type AnalysisSummary,
  chi2FromDecayStudy,
  type EvaporationAnalysis,
  invariantsText,
} from "../analysis/mod.ts";
import type { Chi2Source } from "../analysis/options.ts";
import type { VinenLoss } from "../analysis/estimators/vinen_fit.ts";
import type { VinenAnalysis } from "../analysis/to_store/vinen.ts";
import type { DiffusionAnalysis } from "../analysis/to_store/diffusion.ts";
import type { EvaporationEstimate } from "../analysis/estimators/mod.ts";
import { openStoreReadOnly, readStudy, StoreReadError } from "../store/reads.ts";
import { diffusionHeading, diffusionUnit, timeInKappaUnits, type UnitLabels } from "../engines/units.ts";
import { StudyStore } from "../store/db.ts";
import { PartialResultsError, readEnsembleResults } from "../store/ensemble.ts";
import { writeReport } from "../reports/mod.ts";
import { formatNumber } from "../reports/html.ts";
import { UserError } from "./errors.ts";
import { analysisJson } from "./analyse_json.ts";

/** Option values as the command line gives them (strings are parsed here). */
export interface AnalyseCommandOptions {
  readonly replicates?: number;
  readonly seed?: string;
  readonly chi2?: string;
  /** Database of a homogeneous decay study to estimate χ₂ from (instead of `chi2`). */
  readonly chi2From?: string;
  readonly vinenReplicates?: number;
  readonly sensitivity?: boolean;
  readonly correlations?: boolean;
  readonly study?: number;
  /** Points analysed in parallel (default: number of cores). */
  readonly workers?: number;
  /** Progress lines on standard error (default false). */
  readonly verbose?: boolean;
  /** Print the summary as one JSON object (`analyse_json.ts`) instead of the text lines. */
  readonly json?: boolean;
}

function parseChi2(v: string | undefined): number | undefined {
  if (v === undefined) return undefined;
  const x = Number(v);
  if (v.trim() === "" || !Number.isFinite(x) || x < 0) {
    throw new UserError(`--chi2 must be a number ≥ 0, got '${v}'`, "χ₂ comes from a homogeneous decay study");
  }
  return x;
}

/** Library errors the user can act on, as UserErrors; everything else passes through. */
export function userFacing(e: unknown, dbPath: string): unknown {
  if (e instanceof StoreReadError) {
    return new UserError(e.message, `is ${dbPath} a database written by 'spindrift run'?`);
  }
  if (e instanceof AnalysisInputError) return new UserError(e.message);
  if (e instanceof PartialResultsError) {
    return new UserError(
      `${dbPath}: ${e.message}`,
      "the stored results stay valid for the data they were computed from; fix the errors above and run " +
        "analyse again",
    );
  }
  return e;
}

/** The analyses that failed (status "error" without a value), one line each: any of them makes analyse fail. */
export function analysisErrors(s: AnalysisSummary): string[] {
  const out: string[] = [];
  for (const p of s.points) {
    const parts: [string, { status: string; reason: string | null; value?: number | null }][] = [
      ["diffusion", p.diffusion],
      ["Vinen fit", p.vinen],
      ["sensitivity", p.sensitivity],
      ["correlations", p.correlations],
      ["evaporation", p.evaporation],
    ];
    for (const [what, e] of parts) {
      if (e.status === "error" && (e.value === undefined || e.value === null)) {
        out.push(`${p.label}: ${what}: ${e.reason ?? "error"}`);
      }
    }
  }
  return [...new Set(out)];
}

/**
 * Runs the analysis and returns the lines to print (a table of D/κ per point) and the analyses that failed.
 * The database's writer lock is held from start to end, so no run or collect changes the data under it.
 */
export async function analyseCommand(
  dbPath: string,
  o: AnalyseCommandOptions,
): Promise<{ lines: string[]; errors: string[] }> {
  let summary: AnalysisSummary;
  const head: string[] = [];
  if (o.chi2 !== undefined && o.chi2From !== undefined) {
    throw new UserError("give either --chi2 or --chi2-from, not both");
  }
  const chi2 = parseChi2(o.chi2);
  let vinenLoss: VinenLoss = chi2 === undefined ? { mode: "free" } : { mode: "fixed", chi2 };
  let chi2Source: Chi2Source | undefined = chi2 === undefined
    ? undefined
    : { kind: "given", note: "given with --chi2" };
  if (o.chi2From !== undefined) {
    try {
      const est = chi2FromDecayStudy(o.chi2From, { seed: o.seed });
      // The decay study's 95 % interval as a Gaussian prior: σ = (upper − lower)/(2 · 1.96).
      const sigma = est.interval ? (est.interval[1] - est.interval[0]) / (2 * 1.959964) : 0.1 * est.chi2;
      vinenLoss = { mode: "prior", chi2: est.chi2, sigma };
      chi2Source = est.provenance;
      head.push(est.source);
    } catch (e) {
      throw userFacing(e, o.chi2From);
    }
  }
  const store = StudyStore.open(dbPath, { command: "analyse" });
  try {
    summary = await analyseStudy(dbPath, {
      studyId: o.study,
      seed: o.seed,
      replicates: o.replicates,
      vinenLoss,
      chi2Source,
      vinenReplicates: o.vinenReplicates,
      workers: o.workers,
      sensitivity: o.sensitivity,
      correlations: o.correlations,
      onProgress: o.verbose ? (m) => console.error(m) : undefined,
    });
  } catch (e) {
    throw userFacing(e, dbPath);
  } finally {
    store.close();
  }
  const errors = analysisErrors(summary);
  const recorded = studyUnits(dbPath, o.study);
  if (o.json) {
    return {
      lines: [JSON.stringify(analysisJson(summary, { database: dbPath, units: recorded, errors }), null, 2)],
      errors,
    };
  }
  const labels = recorded.length && recorded.time
    ? { length: recorded.length, time: recorded.time }
    : undefined;
  const lines = [...head, ...formatSummary(summary, dbPath, labels)];
  if (errors.length > 0) {
    lines.push(`analysis errors (${errors.length}); the rows above marked error are stored as such:`);
    for (const e of errors) lines.push(`  ${e}`);
  }
  return { lines, errors };
}

/** The units recorded with the study revision (labels D as D/κ or in m²/s; κ when recorded). */
function studyUnits(dbPath: string, studyId: number | undefined): Readonly<Record<string, string>> {
  const db = openStoreReadOnly(dbPath);
  try {
    const study = readStudy(db, { studyId });
    if (study.units.kappa !== undefined) return study.units;
    // Databases run before κ was recorded with the units: the analysis stores the κ it used with the Vinen fit.
    const kappa = readEnsembleResults(db, study.id, { analysis: "vinen" })
      .map((r) => r.detail.kappa).find((k): k is number => typeof k === "number");
    return kappa === undefined ? study.units : { ...study.units, kappa: String(kappa) };
  } finally {
    db.close();
  }
}

const ESTIMATOR_LABEL: Readonly<Record<string, string>> = {
  origin: "survivor average from t₀",
  cohort: "fixed cohort (the answer)",
  lag: "lag increments D(τ)",
  radius: "D_R (cohort spread)",
};

function ciText(lower: number | null, upper: number | null): string {
  return lower !== null && upper !== null ? ` [${formatNumber(lower)}, ${formatNumber(upper)}]` : "";
}

/** The diffusion lines of one point: answer or "no diffusive regime", window, evidence, reasons, losses. */
function diffusionLines(
  d: DiffusionAnalysis,
  pad: string,
  units: UnitLabels | undefined,
): { head: string; lines: string[] } {
  const dLabel = diffusionUnit(units).symbol === "D/κ" ? "D/κ" : "D";
  const lines: string[] = [];
  let head: string;
  if (d.status === "ok" && d.value !== null) {
    head = `${formatNumber(d.value)}${ciText(d.lower, d.upper) || " (no interval)"}`;
  } else if (d.status === "no-diffusive-regime") head = "no diffusive regime";
  else head = `${d.status}${d.reason ? `: ${d.reason}` : ""}`;
  if (d.window) {
    lines.push(
      `${pad}window [${formatNumber(d.window.t1)}, ${formatNumber(d.window.t2)}] (t₁ ≥ 3τ_c, τ_c = ${
        d.tauC === null ? "—" : formatNumber(d.tauC)
      }; t₂: ${d.window.end})${
        d.support !== null
          ? `; support: ${
            Math.round(d.support * 100)
          } % of bootstrap replicates find a window of their own that passes the rule`
          : ""
      }`,
    );
  } else if (d.status === "no-diffusive-regime" && d.support !== null) {
    lines.push(
      `${pad}support: ${
        Math.round(d.support * 100)
      } % of bootstrap replicates find a window of their own that passes the rule`,
    );
  }
  const ok = d.status === "ok";
  if (d.estimators.length > 0) {
    lines.push(
      `${pad}evidence: exponent over the window (diffusion = 1, accepted [0.85, 1.15])${
        ok ? `, ${diffusionUnit(units).header}` : ""
      }`,
    );
    for (const e of d.estimators) {
      const label = ESTIMATOR_LABEL[e.name].padEnd(27);
      const ex = e.exponent
        ? `${formatNumber(e.exponent.value)}${ciText(e.exponent.lower, e.exponent.upper)} over ${
          e.name === "origin" ? "t =" : e.name === "cohort" ? "s = t − t₁ =" : "τ ="
        } ${formatNumber(e.range!.from)}–${formatNumber(e.range!.to)}${e.pass ? "" : "  ✗"}`
        : "";
      const D = ok
        ? `${e.exponent ? "; " : ""}${dLabel} ${formatNumber(e.D)}${ciText(e.lower, e.upper)}`
        : "";
      if (ex || D) lines.push(`${pad}  ${label} ${ex}${D}`);
    }
  }
  if (!ok) { for (const r of d.reasons) lines.push(`${pad}why: ${r}`); }
  if (d.loss) {
    lines.push(
      `${pad}losses: ${
        formatNumber(100 * d.loss.inWindow)
      } % of the objects in the main cluster at t₁ are gone ` +
        `from it by t₂; the cohort keeps ${
          formatNumber(100 * d.loss.cohortShare)
        } % (${d.loss.cohortObjects} objects)`,
    );
  }
  if (d.lossLimited) {
    const e = d.lossLimited.estimator;
    lines.push(
      `${pad}loss-limited: the main cluster halves by t = ${
        formatNumber(d.lossLimited.lossAt)
      }; lag increments ` +
        `over [${formatNumber(d.lossLimited.t1)}, ${formatNumber(d.lossLimited.tEnd)}] have exponent ${
          formatNumber(e.exponent!.value)
        }${ciText(e.exponent!.lower, e.exponent!.upper)}${
          e.pass
            ? `: ${dLabel} ${formatNumber(e.D)}${ciText(e.lower, e.upper)} (short lags, objects at both ends)`
            : " ✗"
        }`,
    );
  }
  for (const w of d.warnings) lines.push(`${pad}warning: ${w}`);
  return { head, lines };
}

/** The Vinen-fit lines of one point: D and χ₂ with intervals and the goodness of fit, or why there is no D. */
function vinenLines(v: VinenAnalysis, pad: string, units: UnitLabels | undefined): string[] {
  if (v.status === "not-available") return [`${pad}Vinen fit: not available: ${v.reason}`];
  if (v.status === "error" && v.reducedChi2 === null) return [`${pad}Vinen fit: failed: ${v.reason}`];
  const fit = `reduced χ² = ${v.reducedChi2 === null ? "—" : formatNumber(v.reducedChi2)}, χ₂ ${
    v.mode === "fixed" ? "fixed at" : v.mode === "prior" ? "(decay prior)" : "(free)"
  } ${v.chi2 === null ? "—" : formatNumber(v.chi2)}${
    v.mode === "fixed" ? "" : ciText(v.chi2Lower, v.chi2Upper)
  }`;
  const head = v.status === "ok"
    ? `${pad}Vinen fit: ${diffusionHeading(units, "D", "Vinen")} ${formatNumber(v.value!)}${
      ciText(v.lower, v.upper)
    }; ${fit}`
    : `${pad}Vinen fit: rejected, no D: ${v.reason}; χ₂ ${
      v.mode === "fixed" ? "fixed at" : v.mode === "prior" ? "(decay prior)" : "(free)"
    } ${v.chi2 === null ? "—" : formatNumber(v.chi2)}${
      v.mode === "fixed" ? "" : ciText(v.chi2Lower, v.chi2Upper)
    }`;
  return [head, ...v.notes.map((n) => `${pad}  ${n}`)];
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
function evaporationText(e: EvaporationAnalysis, units?: UnitLabels): string | null {
  if (e.status !== "ok") return e.status === "error" ? `evaporation: error: ${e.reason}` : null;
  const lf = e.lostFraction;
  // A negative loss of line length means the tangle grew (e.g. driven by a normal flow): say so only then.
  const grew = lf !== null && lf.value !== null && Math.min(lf.value, lf.interval?.lower ?? lf.value) < 0;
  const lost = lf?.value !== null && lf
    ? `; lost by the end: ${evText(lf, 100)} % of the ${
      e.objects === "loops" ? `line length${grew ? " (negative: it grew)" : ""}` : "vortices"
    }`
    : "";
  const half = e.tHalf?.value !== null && e.tHalf
    ? `, t½ = ${evText(e.tHalf)}, rate ${evText(e.rate)} per ${
      units && !timeInKappaUnits(units.time) ? units.time : "unit time"
    }`
    : "";
  return `evaporated ${e.objects} by t = ${formatNumber(e.tEnd ?? Number.NaN)}: ${
    evText(e.evaporated)
  }${half}${lost}`;
}

/**
 * The printed summary: the question's answer, then per point D or "no diffusive regime" with the evidence; D is
 * labelled D/κ in κ units and with its unit (m²/s) in physical units.
 */
export function formatSummary(s: AnalysisSummary, dbPath: string, units?: UnitLabels): string[] {
  const lines = [
    `study ${s.studyName} (revision #${s.studyId}), ${s.dimension}D; bootstrap B = ${s.replicates}, ` +
    `seed base ${s.seedBase.length > 24 ? `${s.seedBase.slice(0, 16)}…` : s.seedBase}`,
  ];
  for (const q of s.question) lines.push(q);
  const w = Math.max(5, ...s.points.map((p) => p.label.length));
  lines.push(
    `  ${"point".padEnd(w)}  ${"n".padStart(3)}  ${
      diffusionUnit(units).header
    } [95% CI] (fixed cohort; only where the evidence shows diffusion)`,
  );
  for (const p of s.points) {
    const pad = " ".repeat(w + 9);
    const d = diffusionLines(p.diffusion, pad, units);
    lines.push(`  ${p.label.padEnd(w)}  ${String(p.realisations).padStart(3)}  ${d.head}`);
    lines.push(...d.lines);
    lines.push(...vinenLines(p.vinen, pad, units));
    const ev = evaporationText(p.evaporation, units);
    if (ev) lines.push(`${pad}${ev}`);
    lines.push(`${pad}${invariantsText(p.invariants)}`);
  }
  if (s.chi2Source) lines.push(`Vinen fit: ${s.chi2Source}`);
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
): Promise<{ lines: string[]; errors: string[]; html: string; figuresDir: string }> {
  const { lines, errors } = await analyseCommand(dbPath, o);
  const res = await writeReport(dbPath, { out: o.out, studyId: o.study });
  return { lines, errors, html: res.html, figuresDir: res.figuresDir };
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
