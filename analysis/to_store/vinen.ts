/**
 * The `vinen` rows (docs/methods.md §5.2): the radial profiles of the stored series, rebinned onto common bins over the
 * diffusion window (else the whole run, at most 25 times), fitted with ∂L/∂t = D∇²L − χ₂(κ/2π)L²: D and χ₂
 * together (χ₂ free, or with a decay study's χ₂ as a prior), or D alone at a given χ₂ (`estimators/vinen_fit.ts`).
 * A fit with reduced χ² > 2 is rejected and stores no D as an answer; the model's loss is checked against the
 * observed loss; where χ₂ came from is stored with the rows.
 */
import { pickInterval } from "../estimators/bootstrap.ts";
import type { ProfileEnsemble } from "../estimators/vinen.ts";
import { fitVinen, type VinenFit, type VinenLoss } from "../estimators/vinen_fit.ts";
import { readProfileEnsemble } from "../from_store/profiles.ts";
import type { Chi2Source } from "../options.ts";
import { errorText, finiteOrNull } from "../_util.ts";
import {
  type AnalysisStatus,
  ciDetail,
  type Estimate,
  missing,
  type PointContext,
  type Push,
} from "./rows.ts";

const VINEN_MAX_TIMES = 25;

/** What `analyse` reports about the Vinen fit of one point. */
export interface VinenAnalysis extends Estimate {
  readonly chi2: number | null;
  readonly chi2Lower: number | null;
  readonly chi2Upper: number | null;
  readonly reducedChi2: number | null;
  readonly mode: VinenLoss["mode"];
  readonly notes: readonly string[];
}

/** One line saying where χ₂ came from. */
export function chi2SourceText(loss: VinenLoss, source: Chi2Source | undefined): string {
  if (loss.mode === "free") {
    return "χ₂ fitted freely from the spreading profiles together with D (the two are strongly correlated); " +
      "calibrate it with a homogeneous decay study: spindrift analyse DB --chi2-from DECAY.sqlite";
  }
  if (source?.kind === "decay-study") {
    const ci = source.interval
      ? ` [${source.interval[0].toPrecision(3)}, ${source.interval[1].toPrecision(3)}]`
      : "";
    return `χ₂ = ${
      source.chi2.toPrecision(4)
    }${ci} from the decay study ${source.studyName} (${source.path}, ` +
      `study hash ${source.studyHash.slice(0, 12)}…, ${source.realisations} realisations, 1/L linear for ` +
      `t ≥ ${source.fromTime.toPrecision(3)})${loss.mode === "prior" ? ", used as a prior" : ""}`;
  }
  return `χ₂ = ${loss.chi2} given with --chi2 (fixed: the fit tests it)`;
}

export function vinenRows(
  ctx: PointContext,
  window: { readonly t1: number; readonly t2: number } | null,
  push: Push,
): VinenAnalysis {
  const loss: VinenLoss = ctx.opts.vinenLoss ?? { mode: "free" };
  const source = ctx.opts.chi2Source ?? null;
  const seed = `${ctx.base}/${ctx.point.pointHash}/vinen`;
  const sourceText = chi2SourceText(loss, ctx.opts.chi2Source);
  const none = (status: AnalysisStatus, reason: string): VinenAnalysis => {
    push("vinen", "D", {
      value: null,
      detail: { status, reason, mode: loss.mode, chi2Source: source, sourceText },
    });
    return {
      ...missing(status, reason),
      chi2: null,
      chi2Lower: null,
      chi2Upper: null,
      reducedChi2: null,
      mode: loss.mode,
      notes: [],
    };
  };
  if (ctx.opts.vinen === false) return none("not-available", "not requested");
  try {
    const read = readProfileEnsemble(ctx.db, ctx.ids, {
      dimension: ctx.dimension,
      window,
      maxTimes: VINEN_MAX_TIMES,
    });
    if ("reason" in read) return none("not-available", read.reason);
    const data = read.data;
    const VB = read.used >= 2 ? (ctx.opts.vinenReplicates ?? 200) : 0;
    ctx.progress(`  Vinen fit (χ₂ ${loss.mode}) with ${VB} bootstrap replicates`);
    // κ of the study's units enters the loss term χ₂(κ/2π)L² (physical units: κ of ⁴He in m²/s).
    const vf = fitVinen(data, { loss, replicates: VB, seed, level: ctx.level, kappa: ctx.kappa });
    const ok = vf.status === "ok";
    const dci = pickInterval(vf.ci.D);
    const cci = pickInterval(vf.ci.chi2);
    const status: AnalysisStatus = vf.status === "failed" ? "error" : vf.status;
    const common = {
      status,
      reason: vf.reasons[0] ?? null,
      reasons: vf.reasons,
      warnings: vf.warnings,
      mode: loss.mode,
      prior: loss.mode === "prior" ? { chi2: loss.chi2, sigma: loss.sigma } : null,
      chi2Source: source,
      sourceText,
      seed,
      replicates: VB,
      level: ctx.level,
    };
    push("vinen", "D", {
      value: ok ? vf.D : null,
      lower: ok ? dci.lower : null,
      upper: ok ? dci.upper : null,
      detail: {
        ...common,
        fitted: { D: finiteOrNull(vf.D), lower: dci.lower, upper: dci.upper, interval: dci.method },
        interval: dci.method,
        ...ciDetail(vf.ci.D),
        failedReplicates: vf.bootstrap?.failed ?? 0,
        reducedChi2: finiteOrNull(vf.reducedChi2),
        pValue: finiteOrNull(vf.pValue),
        pearson: finiteOrNull(vf.pearson),
        deviance: finiteOrNull(vf.deviance),
        terms: vf.terms,
        parameters: vf.parameters,
        dispersion: vf.dispersion,
        correlationDChi2: vf.correlation,
        lossCheck: vf.lossCheck,
        priorPull: vf.priorPull,
        convergence: vf.convergence,
        grid: vf.grid,
        kappa: ctx.kappa,
        window: {
          t1: data.t[0],
          t2: data.t[data.t.length - 1],
          times: data.t.length,
          fromDiffusionWindow: !!window,
        },
        realisationsUsed: read.used,
        binWidth: data.binWidth,
        bins: data.bins,
        profiles: profileChartData(data, vf),
        totals: vf.totals,
        rule:
          "reduced χ² = Pearson X²/(terms − fitted parameters) with quasi-Poisson weights; rejected above 2",
      },
    });
    push("vinen", "chi2", {
      value: finiteOrNull(vf.chi2),
      lower: loss.mode === "fixed" ? null : cci.lower,
      upper: loss.mode === "fixed" ? null : cci.upper,
      detail: { ...common, interval: cci.method, ...ciDetail(vf.ci.chi2), priorPull: vf.priorPull },
    });
    push("vinen", "reduced_chi2", {
      value: finiteOrNull(vf.reducedChi2),
      detail: {
        ...common,
        terms: vf.terms,
        parameters: vf.parameters,
        pValue: finiteOrNull(vf.pValue),
        rejectAbove: 2,
      },
    });
    push("vinen", "loss_observed", {
      value: finiteOrNull(vf.lossCheck.observed),
      lower: vf.lossCheck.observedInterval?.lower ?? null,
      upper: vf.lossCheck.observedInterval?.upper ?? null,
      detail: {
        ...common,
        definition: "fraction of the content of the fitted bins gone between the first and last fitted time",
      },
    });
    push("vinen", "loss_model", {
      value: finiteOrNull(vf.lossCheck.model),
      detail: { ...common, consistent: vf.lossCheck.consistent },
    });
    return {
      status,
      reason: vf.reasons[0] ?? null,
      value: ok ? vf.D : null,
      lower: ok ? dci.lower : null,
      upper: ok ? dci.upper : null,
      chi2: finiteOrNull(vf.chi2),
      chi2Lower: cci.lower,
      chi2Upper: cci.upper,
      reducedChi2: finiteOrNull(vf.reducedChi2),
      mode: loss.mode,
      notes: [...vf.reasons.slice(ok ? 0 : 1), ...vf.warnings],
    };
  } catch (e) {
    return none("error", errorText(e));
  }
}

/** Ensemble-mean profiles and the fitted model at up to 4 times. */
function profileChartData(data: ProfileEnsemble, vf: VinenFit): Record<string, unknown> {
  const K = data.bins, J = data.t.length;
  const picks = J <= 4
    ? Array.from({ length: J }, (_, j) => j)
    : [0, Math.round((J - 1) / 3), Math.round((2 * (J - 1)) / 3), J - 1];
  const r = Array.from({ length: K }, (_, k) => (k + 0.5) * data.binWidth);
  const curves = [...new Set(picks)].map((j) => ({
    t: data.t[j],
    mean: Array.from({ length: K }, (_, k) => finiteOrNull(vf.mean[j * K + k])),
    model: Array.from({ length: K }, (_, k) => finiteOrNull(vf.model[j * K + k])),
  }));
  return { r, curves };
}
