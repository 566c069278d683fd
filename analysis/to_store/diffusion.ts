/**
 * The `diffusion` rows of a parameter point: the answer D/κ (fixed cohort) when the evidence shows a diffusive
 * regime, the three estimators side by side (survivor average from t₀, fixed cohort, lag increments) with
 * their intervals and exponent evidence, D_R of the cohort's spread, the window, its support and the losses
 * (`estimators/diffusion.ts` has the rule). Names are documented in DEVELOPERS.md.
 *
 * Values of the estimator rows are stored only when the regime is declared; otherwise `value` is null and
 * `detail.fitted` keeps the slope of the fit over the window, labelled as not a diffusion coefficient.
 */
import { pickInterval } from "../estimators/bootstrap.ts";
import {
  type DiffusionEvidence,
  diffusionEvidence,
  type EstimatorName,
  type EstimatorResult,
} from "../estimators/diffusion.ts";
import { type PreparedTracks, prepareTracks } from "../estimators/tracks.ts";
import { type DomainCut, domainCut } from "../from_store/series.ts";
import type { StoredTracks } from "../from_store/tracks.ts";
import { finiteOrNull } from "../_util.ts";
import { type AnalysisStatus, ciDetail, type PointContext, type Push } from "./rows.ts";

/** One estimator as `analyse` prints it. */
export interface EstimatorSummary {
  readonly name: EstimatorName | "radius";
  /** Fitted D over the window (a diffusion coefficient only when the regime is declared). */
  readonly D: number;
  readonly lower: number | null;
  readonly upper: number | null;
  /** Window-mean exponent with its interval, and the range it was judged over (absent for D_R). */
  readonly exponent:
    | { readonly value: number; readonly lower: number | null; readonly upper: number | null }
    | null;
  readonly range: { readonly from: number; readonly to: number } | null;
  readonly pass: boolean | null;
}

/** What `analyse` reports about the diffusion of one point. */
export interface DiffusionAnalysis {
  readonly status: AnalysisStatus;
  /** First reason (null when ok) and every reason. */
  readonly reason: string | null;
  readonly reasons: readonly string[];
  /** The answer (cohort D) when the regime is declared. */
  readonly value: number | null;
  readonly lower: number | null;
  readonly upper: number | null;
  readonly window: { readonly t1: number; readonly t2: number; readonly end: string } | null;
  readonly tauC: number | null;
  readonly seed: string;
  readonly support: number | null;
  readonly loss: DiffusionEvidence["loss"];
  readonly estimators: readonly EstimatorSummary[];
  readonly lossLimited: {
    readonly t1: number;
    readonly tEnd: number;
    readonly lossAt: number;
    readonly estimator: EstimatorSummary;
  } | null;
  readonly warnings: readonly string[];
  /** Bootstrap replicates and leave-one-out values of the answer (window fixed), for differences. */
  readonly replicates: Float64Array | null;
  readonly jackknife: Float64Array | null;
  /** The prepared tracks (reused by the sensitivity table) and the window end rule. */
  readonly prepared: PreparedTracks | null;
  readonly cut: DomainCut | null;
}

const RULE = "diffusive regime only when (1) a window exists: t₁ ≥ 3τ_c (τ_c: first t with α < 1.2 of the " +
  "survivor-average MSD), t₂ = earliest of the end, the quarter-domain cut and N_main < 50 % of N_main(t₁), " +
  "t₂/t₁ ≥ 5; and (2) for each of the survivor average from t₀, the fixed cohort (from t₁, s ≥ 3τ_c) and the lag " +
  "increments (τ from 3τ_c to ½(t₂ − t₁)) the window-mean exponent lies in [0.85, 1.15] and the bootstrap " +
  "interval of the local exponent overlaps [0.85, 1.15] at every log-grid point";

const DESCRIPTIONS: Readonly<Record<EstimatorSummary["name"], string>> = {
  origin: "survivor average from t₀: objects main at t₀ and at t, MSD = 2dDt + b over [t₁, t₂]",
  cohort: "fixed cohort: objects main throughout [t₁, t₂], displacements from t₁, MSD = 2dDs + b over " +
    "s ∈ [3τ_c, t₂ − t₁]",
  lag: "lag increments: ⟨|r(s + τ) − r(s)|²⟩ over start times s ∈ [t₁, t₂ − τ], objects main at both ends, " +
    "MSD = 2dDτ + b over τ ∈ [3τ_c, ½(t₂ − t₁)]; D(τ) = MSD(τ)/(2dτ)",
  radius: "spread of the cohort: R² = ⟨|r_i − r_j|²⟩/2 over its pairs, D_R = (1/2d) dR²/dt over [t₁, t₂]",
};

const ROW: Readonly<Record<EstimatorSummary["name"], string>> = {
  origin: "D_origin",
  cohort: "D_cohort",
  lag: "D_lag",
  radius: "D_R",
};

function summary(name: EstimatorSummary["name"], e: EstimatorResult): EstimatorSummary {
  const ci = pickInterval(e.ci);
  const radius = name === "radius";
  return {
    name,
    D: e.D,
    lower: ci.lower,
    upper: ci.upper,
    exponent: radius ? null : {
      value: e.exponent.value,
      lower: e.exponent.interval?.lower ?? null,
      upper: e.exponent.interval?.upper ?? null,
    },
    range: radius ? null : { from: e.exponent.from, to: e.exponent.to },
    pass: radius ? null : e.exponent.pass,
  };
}

/** The summary of a point whose diffusion analysis could not run. */
export function noDiffusion(status: AnalysisStatus, reason: string, seed: string): DiffusionAnalysis {
  return {
    status,
    reason,
    reasons: [reason],
    value: null,
    lower: null,
    upper: null,
    window: null,
    tauC: null,
    seed,
    support: null,
    loss: null,
    estimators: [],
    lossLimited: null,
    warnings: [],
    replicates: null,
    jackknife: null,
    prepared: null,
    cut: null,
  };
}

/** The exponent evidence of an estimator as stored (window mean, interval, range, verdict). */
function exponentDetail(e: EstimatorResult): Record<string, unknown> {
  return {
    value: finiteOrNull(e.exponent.value),
    lower: e.exponent.interval?.lower ?? null,
    upper: e.exponent.interval?.upper ?? null,
    from: e.exponent.from,
    to: e.exponent.to,
    pass: e.exponent.pass,
    reason: e.exponent.reason,
  };
}

/** JSON detail of one estimator (curve thinned for the report). */
function estimatorDetail(e: EstimatorResult, d: number): Record<string, unknown> {
  const ci = pickInterval(e.ci);
  const curve = thin(e.curve.x, e.curve.msd, e.curve.weight, 400);
  return {
    abscissa: e.abscissa,
    fitted: { D: e.D, lower: ci.lower, upper: ci.upper, intercept: e.intercept, interval: ci.method },
    ...ciDetail(e.ci),
    fit: e.fit,
    exponent: {
      ...exponentDetail(e),
      local: {
        x: e.exponent.local.x,
        alpha: e.exponent.local.alpha.map(finiteOrNull),
        lower: e.exponent.local.lower,
        upper: e.exponent.local.upper,
      },
    },
    curve,
    // D(τ) = MSD/(2dτ): flat for diffusion (lag estimator; also shown for the others against their abscissa).
    Dx: {
      x: curve.x,
      D: curve.x.map((x, q) => (x > 0 && curve.msd[q] !== null ? curve.msd[q]! / (2 * d * x) : null)),
    },
    slope: { x: Array.from(e.slope.x), alpha: Array.from(e.slope.alpha, finiteOrNull) },
  };
}

/** Reads nothing: estimates from the stored tracks, pushes the `diffusion` rows and returns the summary. */
export function diffusionRows(ctx: PointContext, tracks: StoredTracks | null, push: Push): DiffusionAnalysis {
  const seed = `${ctx.base}/${ctx.point.pointHash}/diffusion`;
  const none = (status: AnalysisStatus, reason: string): DiffusionAnalysis => {
    push("diffusion", "D", { value: null, detail: { status, reason, reasons: [reason], seed, rule: RULE } });
    return noDiffusion(status, reason, seed);
  };
  if (ctx.ids.length === 0) return none("not-available", "no done realisation at this point");
  if (tracks === null || tracks.ensemble.t.length < 3) {
    return none("not-available", "fewer than 3 stored frames per realisation: no displacements to analyse");
  }
  const cut = domainCut(ctx.db, ctx.ids, { engineId: ctx.study.engineId, params: ctx.point.params });
  const prepared = prepareTracks(tracks.ensemble);
  ctx.progress(`  diffusion: three estimators, ${ctx.B} bootstrap replicates`);
  const ev = diffusionEvidence(prepared, {
    seed,
    replicates: ctx.B,
    level: ctx.level,
    tCut: cut.tCut ?? undefined,
  });
  const d = ctx.dimension;
  const status: AnalysisStatus = ev.status;
  const reason = ev.reasons[0] ?? null;
  const common = {
    status,
    reason,
    reasons: ev.reasons,
    seed,
    replicates: ev.bootstrap?.replicates ?? 0,
    level: ctx.level,
    dimension: d,
    timeOrigin: tracks.timeOrigin,
    window: ev.window,
    tauC: ev.tauC,
    tCut: cut.tCut,
    tCutRule: cut.rule,
    support: ev.support,
    warnings: ev.warnings,
  };
  const est: EstimatorSummary[] = [];
  const evidence: Record<string, unknown> = {};
  for (const name of ["origin", "cohort", "lag"] as const) {
    const e = ev.estimators[name];
    if (!e) continue;
    est.push(summary(name, e));
    evidence[name] = exponentDetail(e);
  }
  if (ev.radius) {
    const ci = pickInterval(ev.radius.ci);
    est.push({
      name: "radius",
      D: ev.radius.D,
      lower: ci.lower,
      upper: ci.upper,
      exponent: null,
      range: null,
      pass: null,
    });
  }
  const ok = status === "ok";
  const answer = ev.answer;
  const origin = ev.originCurve;
  push("diffusion", "D", {
    value: answer?.D ?? null,
    lower: answer?.lower ?? null,
    upper: answer?.upper ?? null,
    detail: {
      ...common,
      rule: RULE,
      rules: ev.rules,
      estimator: "cohort",
      interval: answer?.method ?? null,
      ...(ev.estimators.cohort ? ciDetail(ev.estimators.cohort.ci) : {}),
      evidence,
      loss: ev.loss,
      lossLimited: ev.lossLimited
        ? {
          t1: ev.lossLimited.t1,
          tEnd: ev.lossLimited.tEnd,
          lossAt: ev.lossLimited.lossAt,
          ...estimatorDetail(ev.lossLimited.estimator, d),
        }
        : null,
      origin: {
        curve: thin(origin.x, origin.msd, origin.weight, 600),
        slope: origin.slope
          ? { x: Array.from(origin.slope.x), alpha: Array.from(origin.slope.alpha, finiteOrNull) }
          : null,
      },
      guides: guideLines(origin.x, origin.msd, ev),
    },
  });
  for (const name of ["origin", "cohort", "lag"] as const) {
    const e = ev.estimators[name];
    const row = ROW[name];
    if (!e) {
      const why = name === "lag" && ev.window
        ? (ev.reasons.find((r) => r.startsWith("lag increments")) ?? reason)
        : reason;
      push("diffusion", row, {
        value: null,
        detail: { ...common, description: DESCRIPTIONS[name], reason: why },
      });
      continue;
    }
    const ci = pickInterval(e.ci);
    push("diffusion", row, {
      value: ok ? e.D : null,
      lower: ok ? ci.lower : null,
      upper: ok ? ci.upper : null,
      detail: { ...common, description: DESCRIPTIONS[name], interval: ci.method, ...estimatorDetail(e, d) },
    });
  }
  if (ev.radius) {
    const ci = pickInterval(ev.radius.ci);
    push("diffusion", "D_R", {
      value: ok ? ev.radius.D : null,
      lower: ok ? ci.lower : null,
      upper: ok ? ci.upper : null,
      detail: {
        ...common,
        description: DESCRIPTIONS.radius,
        interval: ci.method,
        fitted: { D: ev.radius.D, lower: ci.lower, upper: ci.upper, intercept: ev.radius.intercept },
        ...ciDetail(ev.radius.ci),
      },
    });
  } else push("diffusion", "D_R", { value: null, detail: { ...common, description: DESCRIPTIONS.radius } });
  push("diffusion", "tau_c", { value: ev.tauC, detail: { ...common, rule: "first t with α < 1.2" } });
  push("diffusion", "window_start", { value: ev.window?.t1 ?? null, detail: common });
  push("diffusion", "window_end", {
    value: ev.window?.t2 ?? null,
    detail: { ...common, end: ev.window?.end ?? null },
  });
  push("diffusion", "support", {
    value: ev.support?.fraction ?? null,
    detail: {
      ...common,
      definition:
        "share of bootstrap replicates whose own window (step 1) exists and whose three window-mean " +
        "exponents (step 2, means only) lie in the band",
    },
  });
  push("diffusion", "loss_in_window", {
    value: ev.loss?.inWindow ?? null,
    detail: {
      ...common,
      definition: "1 − (objects main at t₁ and at t₂) / (objects main at t₁), summed over realisations",
      cohortShare: ev.loss?.cohortShare ?? null,
      cohortObjects: ev.loss?.cohortObjects ?? null,
      sinceStart: ev.loss?.sinceStart ?? null,
    },
  });
  let lossLimited: DiffusionAnalysis["lossLimited"] = null;
  if (ev.lossLimited) {
    const e = ev.lossLimited.estimator;
    const ci = pickInterval(e.ci);
    lossLimited = { ...ev.lossLimited, estimator: summary("lag", e) };
    push("diffusion", "D_lag_loss_limited", {
      value: e.exponent.pass ? e.D : null,
      lower: e.exponent.pass ? ci.lower : null,
      upper: e.exponent.pass ? ci.upper : null,
      detail: {
        ...common,
        status: e.exponent.pass ? "ok" : "no-diffusive-regime",
        reason: e.exponent.reason,
        description:
          "lag increments over [t₁, end] although the main cluster fell below 50 % of its size at t₁ " +
          "too early for a window: each lag uses only objects main at both ends",
        t1: ev.lossLimited.t1,
        tEnd: ev.lossLimited.tEnd,
        lossAt: ev.lossLimited.lossAt,
        interval: ci.method,
        ...estimatorDetail(e, d),
      },
    });
  }
  return {
    status,
    reason,
    reasons: ev.reasons,
    value: answer?.D ?? null,
    lower: answer?.lower ?? null,
    upper: answer?.upper ?? null,
    window: ev.window ? { t1: ev.window.t1, t2: ev.window.t2, end: ev.window.end } : null,
    tauC: ev.tauC,
    seed,
    support: ev.support?.fraction ?? null,
    loss: ev.loss,
    estimators: est,
    lossLimited,
    warnings: ev.warnings,
    replicates: ok ? ev.replicates : null,
    jackknife: ok ? ev.jackknife : null,
    prepared,
    cut,
  };
}

/**
 * Anchors of the guide lines of the MSD chart: ∝ t² through the first positive value, ∝ t through the origin
 * estimator's fitted line at the window's geometric centre (or the last positive value without a window).
 */
function guideLines(t: Float64Array, msd: Float64Array, ev: DiffusionEvidence): Record<string, unknown> {
  let first = -1, last = -1;
  for (let k = 0; k < t.length; k++) {
    if (t[k] > 0 && msd[k] > 0) {
      if (first < 0) first = k;
      last = k;
    }
  }
  if (first < 0) return { ballistic: null, diffusive: null };
  const o = ev.estimators.origin;
  let diffusive: { t: number; msd: number };
  if (ev.window && o) {
    const tm = Math.sqrt(ev.window.t1 * ev.window.t2);
    diffusive = { t: tm, msd: 2 * ev.dimension * o.D * tm + o.intercept };
  } else diffusive = { t: t[last], msd: msd[last] };
  return { ballistic: { t: t[first], msd: msd[first] }, diffusive };
}

/** A curve as plain arrays, thinned evenly in log x to about `max` points (the last point always kept). */
export function thin(
  x: Float64Array,
  v: Float64Array,
  w: Float64Array,
  max: number,
): { x: number[]; msd: (number | null)[]; weight: number[] } {
  const keep: number[] = [];
  if (x.length <= max) { for (let k = 0; k < x.length; k++) keep.push(k); }
  else {
    let lo = 0;
    while (lo < x.length && !(x[lo] > 0)) keep.push(lo++);
    const a = Math.log(x[lo]), b = Math.log(x[x.length - 1]);
    let next = a;
    const step = (b - a) / (max - 1);
    for (let k = lo; k < x.length; k++) {
      if (Math.log(x[k]) >= next - 1e-12 || k === x.length - 1) {
        keep.push(k);
        next = Math.log(x[k]) + step;
      }
    }
  }
  return {
    x: keep.map((k) => x[k]),
    msd: keep.map((k) => finiteOrNull(v[k])),
    weight: keep.map((k) => w[k]),
  };
}
