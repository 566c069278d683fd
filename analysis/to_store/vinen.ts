/**
 * The `vinen` rows (methods §5.2): the radial profiles of the stored series, rebinned onto common bins, fitted
 * with ∂L/∂t = D∇²L − χ₂(κ/2π)L² (χ₂ given), fit window = the diffusion window (else the whole run), at most 25
 * times; the sensitivity of D to χ₂ at `chi2Interval` (default [χ₂/2, 2χ₂]).
 */
import { fitVinenDiffusion, type ProfileEnsemble, vinenChi2Sensitivity } from "../estimators/vinen.ts";
import { readAlignedSeries, readScalars } from "../../store/reads.ts";
import { commonProfiles } from "../from_store/profiles.ts";
import { alignTo } from "../from_store/series.ts";
import { errorText, finiteOrNull } from "../_util.ts";
import { type AnalysisStatus, type Estimate, missing, type PointContext, type Push } from "./rows.ts";

const VINEN_MAX_TIMES = 25;

export function vinenRows(
  ctx: PointContext,
  window: { readonly t1: number; readonly t2: number } | null,
  push: Push,
): Estimate {
  const chi2 = ctx.opts.chi2;
  const seed = `${ctx.base}/${ctx.point.pointHash}/vinen`;
  const none = (status: AnalysisStatus, reason: string): Estimate => {
    push("vinen", "D", { value: null, detail: { status, reason, chi2: chi2 ?? null } });
    return missing(status, reason);
  };
  if (chi2 === undefined) {
    return none(
      "not-available",
      "no χ₂ given: fit 1/L = 1/L₀ + χ₂κt/2π on a homogeneous decay study and pass --chi2 X",
    );
  }
  if (ctx.ids.length === 0) return none("not-available", "no done realisation at this point");
  try {
    const scalars = readScalars(ctx.db, ctx.ids);
    const widths = ctx.ids.map((id) => scalars.get(id)?.profile_bin_width ?? Number.NaN);
    const binsOf = ctx.ids.map((id) => scalars.get(id)?.profile_bins ?? Number.NaN);
    if (!widths.every((w) => w > 0) || !binsOf.every((b) => b >= 2)) {
      return none(
        "not-available",
        "radial profiles were not recorded by every done realisation (add cluster to observables.record)",
      );
    }
    const maxBins = Math.max(...binsOf);
    const series = Array.from(
      { length: maxBins },
      (_, k) => readAlignedSeries(ctx.db, ctx.ids, `profile.${k}`),
    );
    const axis = series[0];
    if (axis.k.length < 2) return none("not-available", "fewer than 2 frames carry a radial profile");
    const cols = series.map((s) => alignTo(s, axis.k, Number.NaN)!);
    // Frames in the window (lags since the first frame of the run, as in the MSD fit).
    const msdT0 = readAlignedSeries(ctx.db, ctx.ids.slice(0, 1), "msd").t[0] ?? axis.t[0];
    const lags = Array.from(axis.t, (x) => x - msdT0);
    const t1 = window?.t1 ?? lags[0];
    const t2 = window?.t2 ?? lags[lags.length - 1];
    let sel: number[] = [];
    for (let j = 0; j < lags.length; j++) if (lags[j] >= t1 - 1e-12 && lags[j] <= t2 + 1e-12) sel.push(j);
    if (sel.length > VINEN_MAX_TIMES) {
      const m = sel.length;
      sel = Array.from(
        { length: VINEN_MAX_TIMES },
        (_, q) => sel[Math.round((q * (m - 1)) / (VINEN_MAX_TIMES - 1))],
      );
    }
    if (sel.length < 2) return none("not-available", `fewer than 2 profile frames in [${t1}, ${t2}]`);
    // Realisations with a complete profile at every selected frame.
    const usable: number[] = [];
    ctx.ids.forEach((_, i) => {
      let ok = true;
      for (let k = 0; k < binsOf[i] && ok; k++) {
        for (const j of sel) if (!Number.isFinite(cols[k][i][j])) ok = false;
      }
      if (ok) usable.push(i);
    });
    if (usable.length === 0) {
      return none("not-available", "no realisation has complete profiles in the window");
    }
    const common = commonProfiles(
      ctx.dimension,
      usable.map((i) => ({
        binWidth: widths[i],
        values: Array.from({ length: binsOf[i] }, (_, k) => cols[k][i]),
      })),
      sel,
    );
    const data: ProfileEnsemble = {
      dimension: ctx.dimension,
      binWidth: common.binWidth,
      bins: common.bins,
      t: sel.map((j) => lags[j]),
      profiles: common.profiles,
    };
    const VB = usable.length >= 2 ? (ctx.opts.vinenReplicates ?? 200) : 0;
    ctx.progress(`  Vinen fit (χ₂ = ${chi2}) with ${VB} bootstrap replicates`);
    const vf = fitVinenDiffusion(data, { chi2, replicates: VB, seed, level: ctx.level });
    const ci = vf.ci?.percentile ?? null;
    const interval = ctx.opts.chi2Interval ?? (chi2 > 0 ? [chi2 / 2, 2 * chi2] as const : [0, 0.3] as const);
    const sens = vinenChi2Sensitivity(data, { chi2, chi2Interval: interval });
    const detail = {
      status: vf.atBound ? "error" : "ok",
      reason: vf.atBound ? "the optimum lies at the edge of the search bracket" : null,
      chi2,
      chi2Interval: interval,
      chi2IntervalRule: ctx.opts.chi2Interval
        ? "given"
        : chi2 > 0
        ? "[χ₂/2, 2χ₂]"
        : "[0, 0.3] (χ₂ = 0 given)",
      seed,
      replicates: VB,
      failedReplicates: vf.bootstrap?.failed ?? 0,
      level: ctx.level,
      interval: "percentile",
      standardError: vf.ci?.standardError ?? null,
      sse: vf.sse,
      terms: vf.terms,
      excluded: vf.excluded,
      grid: vf.grid,
      window: { t1: data.t[0], t2: data.t[data.t.length - 1], times: data.t.length },
      realisationsUsed: usable.length,
      binWidth: common.binWidth,
      bins: common.bins,
      profiles: profileChartData(data, vf.residuals),
      sensitivity: { chi2: sens.chi2, D: sens.D, dDdChi2: sens.dDdChi2 },
    };
    push("vinen", "D", { value: vf.D, lower: ci?.lower ?? null, upper: ci?.upper ?? null, detail });
    push("vinen", "chi2", { value: chi2, detail: { source: "given (--chi2)", interval } });
    push("vinen", "D_chi2_low", { value: sens.D[0], detail: { chi2: sens.chi2[0] } });
    push("vinen", "D_chi2_high", { value: sens.D[2], detail: { chi2: sens.chi2[2] } });
    push("vinen", "dD_dchi2", { value: sens.dDdChi2, detail: { chi2Interval: interval } });
    return {
      status: vf.atBound ? "error" : "ok",
      reason: detail.reason,
      value: vf.D,
      lower: ci?.lower ?? null,
      upper: ci?.upper ?? null,
    };
  } catch (e) {
    return none("error", errorText(e));
  }
}

/** Ensemble-mean profiles and the fitted model at up to 4 times (model = mean + residual·σ). */
function profileChartData(data: ProfileEnsemble, residuals: Float64Array): Record<string, unknown> {
  const K = data.bins, J = data.t.length, n = data.profiles.length;
  const picks = J <= 4
    ? Array.from({ length: J }, (_, j) => j)
    : [0, Math.round((J - 1) / 3), Math.round((2 * (J - 1)) / 3), J - 1];
  const r = Array.from({ length: K }, (_, k) => (k + 0.5) * data.binWidth);
  const curves = [...new Set(picks)].map((j) => {
    const mean: (number | null)[] = [];
    const model: (number | null)[] = [];
    for (let k = 0; k < K; k++) {
      let s = 0;
      for (const p of data.profiles) s += p[j * K + k];
      const m = s / n;
      let ss = 0;
      for (const p of data.profiles) ss += (p[j * K + k] - m) ** 2;
      const sigma = n > 1 ? Math.sqrt(ss / (n - 1) / n) : Number.NaN;
      mean.push(finiteOrNull(m));
      if (j === 0) model.push(finiteOrNull(m));
      else {
        const res = residuals[(j - 1) * K + k];
        model.push(Number.isFinite(res) && Number.isFinite(sigma) ? m + res * sigma : null);
      }
    }
    return { t: data.t[j], mean, model };
  });
  return { r, curves };
}
