/**
 * The `msd-fit` and `rms-fit` rows of a parameter point: D/κ from the stored MSD series (window rule of methods
 * §5.1, bootstrap over realisations) and D_R from the growth of R²_rms over the same window.
 */
import type { DiffusionFit } from "../estimators/msd_fit.ts";
import { fitDiffusion } from "../estimators/msd_fit.ts";
import { type StoredEnsemble, storedEnsemble } from "../from_store/series.ts";
import { errorText, finiteOrNull } from "../_util.ts";
import {
  type AnalysisStatus,
  ciDetail,
  type Estimate,
  missing,
  pickInterval,
  type PointContext,
  type Push,
} from "./rows.ts";

/** What `analyse` reports about the MSD fit of one point. */
export type MsdAnalysis = Estimate & {
  readonly window: { readonly t1: number; readonly t2: number } | null;
  readonly tauC: number | null;
  readonly seed: string;
  /** Fraction of bootstrap replicates in which the window rule found no diffusive regime (left out). */
  readonly noRegimeFraction: number | null;
  /** Advice about the fit (few realisations, a marginal regime). */
  readonly warnings: readonly string[];
};

/** Computes and pushes the `msd-fit` and `rms-fit` rows; returns the fit for the analyses that follow it. */
export function msdRows(ctx: PointContext, push: Push): {
  readonly msd: MsdAnalysis;
  readonly radius: Estimate;
  readonly fit: DiffusionFit | null;
  readonly ens: StoredEnsemble | null;
} {
  const { point } = ctx;
  const msdSeed = `${ctx.base}/${point.pointHash}/msd`;
  // --- MSD fit and RMS-radius estimate -----------------------------------------------------------------
  let ens: StoredEnsemble | null = null;
  let fit: DiffusionFit | null = null;
  let msd: MsdAnalysis;
  let radius: Estimate;
  try {
    ens = storedEnsemble(ctx.db, ctx.ids, { engineId: ctx.study.engineId, params: ctx.point.params });
    if (ens === null) {
      const reason = ctx.ids.length === 0
        ? "no done realisation at this point"
        : "no done realisation recorded the 'msd' series (add msd to observables.record)";
      msd = msdMissing("not-available", reason, msdSeed);
      radius = missing("not-available", reason);
    } else {
      ctx.progress(`  MSD fit with ${ctx.B} bootstrap replicates`);
      fit = fitDiffusion(ens.input, {
        dimension: ctx.dimension,
        seed: msdSeed,
        replicates: ctx.ids.length >= 2 ? ctx.B : 0,
        level: ctx.level,
        tCut: ens.tCut ?? undefined,
      });
      const ci = pickInterval(fit.ci);
      const status: AnalysisStatus = fit.status;
      msd = {
        status,
        reason: fit.reason,
        value: fit.D,
        lower: ci.lower,
        upper: ci.upper,
        window: fit.window ? { t1: fit.window.t1, t2: fit.window.t2 } : null,
        tauC: fit.crossoverTime,
        seed: msdSeed,
        noRegimeFraction: fit.bootstrap?.noRegimeFraction ?? null,
        warnings: fit.warnings,
      };
      const common = {
        status,
        reason: fit.reason,
        seed: msdSeed,
        replicates: fit.bootstrap?.replicates ?? 0,
        level: ctx.level,
        dimension: ctx.dimension,
        timeOrigin: ens.timeOrigin,
        window: fit.window,
        tCut: ens.tCut,
        tCutRule: ens.tCutRule,
        warnings: fit.warnings,
      };
      push("msd-fit", "D", {
        value: fit.D,
        lower: ci.lower,
        upper: ci.upper,
        detail: {
          ...common,
          ...ciDetail(fit.ci),
          interval: ci.method,
          intercept: fit.intercept,
          crossoverTime: fit.crossoverTime,
          censoredFraction: fit.censoredFraction,
          noRegimeFraction: fit.bootstrap?.noRegimeFraction ?? null,
          rules: fit.rules,
          series: thinSeries(fit.ensemble.t, fit.ensemble.msd, fit.ensemble.weight, 600),
          slope: { t: Array.from(fit.slope.t), alpha: Array.from(fit.slope.alpha, finiteOrNull) },
          guides: guideLines(fit),
        },
      });
      push("msd-fit", "tau_c", {
        value: fit.crossoverTime,
        detail: { ...common, rule: "first t with α < 1.2" },
      });
      push("msd-fit", "window_start", { value: fit.window?.t1 ?? null, detail: common });
      push("msd-fit", "window_end", { value: fit.window?.t2 ?? null, detail: common });
      push("msd-fit", "censored_fraction", { value: fit.censoredFraction, detail: common });
      if (fit.radius) {
        const rci = pickInterval(fit.radius.ci);
        radius = { status: "ok", reason: null, value: fit.radius.D, lower: rci.lower, upper: rci.upper };
        push("rms-fit", "D_R", {
          value: fit.radius.D,
          lower: rci.lower,
          upper: rci.upper,
          detail: {
            ...common,
            ...ciDetail(fit.radius.ci),
            interval: rci.method,
            intercept: fit.radius.intercept,
          },
        });
      } else {
        const reason = fit.status !== "ok"
          ? `no fitting window: ${fit.reason}`
          : "no done realisation recorded 'cluster_rms_radius' (add cluster to observables.record)";
        radius = missing(fit.status !== "ok" ? "no-diffusive-regime" : "not-available", reason);
        push("rms-fit", "D_R", { value: null, detail: { ...common, status: radius.status, reason } });
      }
    }
  } catch (e) {
    const reason = errorText(e);
    msd = msdMissing("error", reason, msdSeed);
    radius = missing("error", reason);
  }
  if (msd.status === "not-available" || msd.status === "error") {
    push("msd-fit", "D", { value: null, detail: { status: msd.status, reason: msd.reason, seed: msdSeed } });
    push("rms-fit", "D_R", { value: null, detail: { status: radius.status, reason: radius.reason } });
  }

  return { msd, radius, fit, ens };
}

/** The MSD entry of a point whose fit could not run. */
function msdMissing(status: AnalysisStatus, reason: string, seed: string): MsdAnalysis {
  return { ...missing(status, reason), window: null, tauC: null, seed, noRegimeFraction: null, warnings: [] };
}

/**
 * Anchors of the guide lines of the MSD chart: ∝ t² through the first positive ensemble value, ∝ t through
 * the fitted line's value at the window's geometric centre (or the last positive value without a window).
 */
function guideLines(fit: DiffusionFit): Record<string, unknown> {
  const { t, msd } = fit.ensemble;
  let first = -1, last = -1;
  for (let k = 0; k < t.length; k++) {
    if (t[k] > 0 && msd[k] > 0) {
      if (first < 0) first = k;
      last = k;
    }
  }
  if (first < 0) return { ballistic: null, diffusive: null };
  let diffusive: { t: number; msd: number };
  if (fit.window && fit.D !== null && fit.intercept !== null) {
    const tm = Math.sqrt(fit.window.t1 * fit.window.t2);
    diffusive = { t: tm, msd: 2 * fit.dimension * fit.D * tm + fit.intercept };
  } else diffusive = { t: t[last], msd: msd[last] };
  return { ballistic: { t: t[first], msd: msd[first] }, diffusive };
}

/** Series as plain arrays, thinned evenly in log t to about `max` points (the last point always kept). */
function thinSeries(
  t: Float64Array,
  v: Float64Array,
  w: Float64Array,
  max: number,
): { t: number[]; msd: (number | null)[]; weight: number[] } {
  const keep: number[] = [];
  if (t.length <= max) { for (let k = 0; k < t.length; k++) keep.push(k); }
  else {
    let lo = 0;
    while (lo < t.length && !(t[lo] > 0)) keep.push(lo++);
    const a = Math.log(t[lo]), b = Math.log(t[t.length - 1]);
    let next = a;
    const step = (b - a) / (max - 1);
    for (let k = lo; k < t.length; k++) {
      if (Math.log(t[k]) >= next - 1e-12 || k === t.length - 1) {
        keep.push(k);
        next = Math.log(t[k]) + step;
      }
    }
  }
  return {
    t: keep.map((k) => t[k]),
    msd: keep.map((k) => finiteOrNull(v[k])),
    weight: keep.map((k) => w[k]),
  };
}
