/**
 * The `correlations` rows: velocity correlations f(r), g(r) of the main cluster, where the engine provides a
 * velocity field at probe points (2D point vortices). At up to 6 frames per realisation (spread over the MSD
 * window, else the run), probes on a 24 × 24 grid clipped to the disk of radius √2·R_rms about the
 * main-cluster centroid (√2·R_rms is the radius of a uniform disk with that R_rms), probes within 0.1ℓ of a
 * vortex excluded (ℓ = (2πR²_rms/N_main)^{1/2}), 20 bins up to √2·R_rms of the first analysed frame. The
 * isotropy check compares f with the f implied by g through g = f + (r/(d−1)) f′ (integral form).
 */
import { longitudinalFromTransverse, VelocityCorrelationAccumulator } from "../estimators/correlations.ts";
import { iterateFrames } from "../../store/frames.ts";
import { readAlignedSeries } from "../../store/reads.ts";
import { velocityFieldFor } from "../from_store/engines.ts";
import { errorText, finiteOrNull } from "../_util.ts";
import { type AnalysisStatus, type PointContext, type Push } from "./rows.ts";

/** What `analyse` reports about the velocity correlations of one point. */
export interface CorrelationsAnalysis {
  readonly status: AnalysisStatus;
  readonly reason: string | null;
}

const CORR_FRAMES = 6;
const PROBE_GRID = 24;
const CORR_BINS = 20;
const CORE_FRACTION = 0.1;

export function correlationRows(
  ctx: PointContext,
  window: { readonly t1: number; readonly t2: number } | null,
  push: Push,
): CorrelationsAnalysis {
  const none = (status: AnalysisStatus, reason: string) => {
    push("correlations", "f_integral", { value: null, detail: { status, reason } });
    return { status, reason };
  };
  if (ctx.opts.correlations === false) return none("not-available", "not requested (--no-correlations)");
  if (ctx.dimension !== 2) {
    return none("not-available", "velocity correlations are implemented for 2D engines only");
  }
  const provider = velocityFieldFor(ctx.study.engineId, ctx.point.params);
  if (provider.field === null) return none("not-available", provider.reason);
  if (ctx.ids.length === 0) return none("not-available", "no done realisation at this point");
  try {
    ctx.progress(`  velocity correlations`);
    const field = provider.field;
    const rmsA = readAlignedSeries(ctx.db, ctx.ids, "msd");
    const t0 = rmsA.t[0] ?? 0;
    const t1 = window?.t1 ?? 0;
    const t2 = window?.t2 ?? Number.POSITIVE_INFINITY;
    let acc: VelocityCorrelationAccumulator | null = null;
    let rMax = Number.NaN;
    let snapshots = 0;
    const times: number[] = [];
    for (const id of ctx.ids) {
      // Candidate frames: those in [t1, t2] (lags), excluding the first frame; pick up to CORR_FRAMES evenly.
      const ks: number[] = [];
      for (let j = 0; j < rmsA.k.length; j++) {
        const lag = rmsA.t[j] - t0;
        if (j > 0 && lag >= t1 - 1e-12 && lag <= t2 + 1e-12) ks.push(rmsA.k[j]);
      }
      const m = ks.length;
      const chosen = new Set(
        m <= CORR_FRAMES
          ? ks
          : Array.from({ length: CORR_FRAMES }, (_, q) => ks[Math.round((q * (m - 1)) / (CORR_FRAMES - 1))]),
      );
      for (const f of iterateFrames(ctx.db, id)) {
        if (!chosen.has(f.k)) continue;
        const x = f.columns.x as Float64Array, y = f.columns.y as Float64Array;
        const g = f.columns.circulation as Float64Array | undefined;
        const lab = f.columns.label as Uint8Array | undefined;
        if (g === undefined) return none("not-available", "stored frames carry no circulation");
        let cx = 0, cy = 0, nm = 0;
        for (let i = 0; i < f.n; i++) {
          if (lab === undefined || lab[i] === 0) {
            cx += x[i];
            cy += y[i];
            nm++;
          }
        }
        if (nm < 2) continue;
        cx /= nm;
        cy /= nm;
        let r2 = 0;
        for (let i = 0; i < f.n; i++) {
          if (lab === undefined || lab[i] === 0) r2 += (x[i] - cx) ** 2 + (y[i] - cy) ** 2;
        }
        const rms = Math.sqrt(r2 / nm);
        if (!(rms > 0)) continue;
        const Rp = Math.SQRT2 * rms;
        if (acc === null) {
          rMax = Rp;
          acc = new VelocityCorrelationAccumulator({
            dimension: 2,
            rMax,
            bins: CORR_BINS,
            coreRadius: 0, // set per snapshot below through the probe filter
          });
        }
        const ell = Math.sqrt((2 * Math.PI * rms * rms) / nm);
        const core = CORE_FRACTION * ell;
        const px: number[] = [], py: number[] = [];
        const s = (2 * Rp) / PROBE_GRID;
        for (let a = 0; a < PROBE_GRID; a++) {
          for (let b = 0; b < PROBE_GRID; b++) {
            const ox = -Rp + (a + 0.5) * s, oy = -Rp + (b + 0.5) * s;
            if (ox * ox + oy * oy > Rp * Rp) continue;
            const qx = cx + ox, qy = cy + oy;
            let near = false;
            for (let i = 0; i < f.n && !near; i++) near = (x[i] - qx) ** 2 + (y[i] - qy) ** 2 < core * core;
            if (!near) {
              px.push(qx);
              py.push(qy);
            }
          }
        }
        acc.add({ x: px, y: py, vortices: { x, y }, velocity: field(f.n, x, y, g) });
        snapshots++;
        times.push(f.t - t0);
      }
    }
    if (acc === null || snapshots === 0) {
      return none("not-available", "no frame with a main cluster to probe");
    }
    const res = acc.result();
    const keep: number[] = [];
    for (let b = 0; b < res.r.length; b++) {
      if (res.pairs[b] > 0 && Number.isFinite(res.f[b]) && Number.isFinite(res.g[b])) keep.push(b);
    }
    const rr = keep.map((b) => res.rMean[b]);
    const fFromG = keep.length > 0
      ? Array.from(longitudinalFromTransverse(rr, keep.map((b) => res.g[b]), 2))
      : [];
    let dev = 0;
    keep.forEach((b, q) => (dev = Math.max(dev, Math.abs(res.f[b] - fFromG[q]))));
    let integral = 0;
    for (let q = 0; q < keep.length; q++) {
      const rPrev = q === 0 ? 0 : rr[q - 1];
      const fPrev = q === 0 ? 1 : res.f[keep[q - 1]];
      integral += 0.5 * (fPrev + res.f[keep[q]]) * (rr[q] - rPrev);
    }
    const detail = {
      status: "ok",
      reason: null,
      snapshots,
      snapshotTimes: times,
      rMax,
      bins: CORR_BINS,
      probeGrid: PROBE_GRID,
      coreFraction: CORE_FRACTION,
      rule: "probes on a 24×24 grid in the disk of radius √2·R_rms about the main-cluster centroid; probes " +
        "within 0.1ℓ of any vortex excluded; snapshot-mean velocity removed",
      r: Array.from(res.r),
      rMean: Array.from(res.rMean, finiteOrNull),
      f: Array.from(res.f, finiteOrNull),
      g: Array.from(res.g, finiteOrNull),
      fStdErr: res.fStdErr ? Array.from(res.fStdErr, finiteOrNull) : null,
      gStdErr: res.gStdErr ? Array.from(res.gStdErr, finiteOrNull) : null,
      pairs: Array.from(res.pairs),
      fFromG: { r: rr, f: fFromG },
      uPrime2: res.uPrime2,
      axisRatios: res.axisRatios,
      probesKept: res.probesKept,
      probesExcluded: res.probesExcluded,
    };
    push("correlations", "f_integral", { value: integral, detail });
    push("correlations", "u_rms", { value: Math.sqrt(res.uPrime2), detail: { snapshots } });
    push("correlations", "isotropy_deviation", {
      value: dev,
      detail: { rule: "max over bins of |f − f implied by g through g = f + r f′ (2D, integral form)|" },
    });
    return { status: "ok", reason: null };
  } catch (e) {
    return none("error", errorText(e));
  }
}
