/**
 * Ensemble analysis of a stored study: from the realisations in the database to answers with honest error
 * bars, stored back as ensemble-level rows (`ensemble_results`) that the report and `spindrift query` read.
 * Nothing here reruns an engine: everything is recomputed from stored series and frames.
 *
 * ```
 *  study database ──read──▶ per parameter point, done realisations (index < planned)
 *     series msd, msd_count, cluster_rms_radius, main_count ──▶ fitDiffusion ──▶ "msd-fit", "rms-fit"
 *     stored frames ──replay (classifier + msd, thresholds ×½ and ×2)──▶ fitDiffusion ──▶ "sensitivity"
 *     profile.<k> + profile_bin_width ──common bins──▶ fitVinenDiffusion (χ₂ given) ──▶ "vinen"
 *     stored frames + engine velocity field at probes ──▶ VelocityCorrelationAccumulator ──▶ "correlations"
 *  ──▶ ensemble_results (all rows of the study revision replaced in one transaction)
 * ```
 *
 * Rules and choices (each recorded in the rows' `detail_json`):
 * - Realisations: those `done` with index below the study's planned count (as the report counts them).
 * - Dimension: the engine's declared dimension; for engines not in this build, from the stored frame layout
 *   (a `z` column means 3D).
 * - Times: lags since each realisation's first frame (the MSD origin t₀); `timeOrigin` records t₀.
 * - MSD fit (`fitDiffusion`, methods §5.1): ensemble MSD weighted by `msd_count` (number at risk), window
 *   rules of the methods notes; t₂ also stops when the cluster reaches a quarter of the domain (its diameter
 *   2R_rms reaches a quarter of the disk diameter or box side; unbounded domains have no such cut).
 *   Interval: bootstrap over realisations, B = `replicates` (default 2000), BCa where defined, else
 *   percentile; both are kept in the detail. Seed string `<seed>/<point hash>/msd`, `<seed>` defaulting to the
 *   study hash, so a rerun reproduces every interval bit for bit.
 * - RMS-radius estimate D_R = (1/2d) dR²_rms/dt over the same window and resamples.
 * - Sensitivity (methods §4): the stored frames are replayed through the classifier and the msd observable
 *   with each threshold halved and doubled (others at their study values): separationFactor, radiusFactor,
 *   speedTolerance multiplied; stickyFrames multiplied and rounded (≥ 1); outwardCosine c varied through its
 *   angle θ = arccos c (θ/2 and min(2θ, 180°)), since doubling a cosine leaves its range. 11 rows: base + 5 × 2.
 *   The base row must reproduce the stored-series fit (recorded as `matchesStored`).
 * - Vinen fit (methods §5.2): needs χ₂ (`chi2`, from a homogeneous decay study); profiles rebinned onto
 *   common bins, fit window = the MSD window (else the whole run), at most 25 times; sensitivity of D to χ₂
 *   at `chi2Interval` (default [χ₂/2, 2χ₂]).
 * - Velocity correlations: only where the engine provides a velocity field at probe points (2D point
 *   vortices). At up to 6 frames per realisation (spread over the MSD window, else the run), probes on a
 *   24 × 24 grid clipped to the disk of radius √2·R_rms about the main-cluster centroid (√2·R_rms is the radius
 *   of a uniform disk with that R_rms), probes within 0.1ℓ of a vortex excluded (ℓ = (2πR²_rms/N_main)^{1/2}),
 *   20 bins up to √2·R_rms of the first analysed frame. The isotropy check compares f with the f implied by g
 *   through g = f + (r/(d−1)) f′ (integral form).
 *
 * @example
 * ```ts
 * import { analyseStudy } from "./analyse.ts";
 * const summary = await analyseStudy("runs/film-patch.sqlite", { replicates: 2000, chi2: 0.3 });
 * for (const p of summary.points) console.log(p.label, p.msd.status, p.msd.D, p.msd.lower, p.msd.upper);
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import type { Dimension, EngineCapabilities, RunControls } from "../engines/contract.ts";
import type { ClassificationConfig } from "../engines/observables/contract.ts";
import { checkClassificationConfig } from "../engines/observables/mod.ts";
import { findEngine } from "../engines/registry.ts";
import { type DiffusionFit, fitDiffusion, type MsdEnsembleInput } from "./estimators/msd_fit.ts";
import type { EstimatorCI } from "./estimators/msd_fit.ts";
import { type EvaporationAnalysis, evaporationRows } from "./to_store/evaporation.ts";
import { fitVinenDiffusion, type ProfileEnsemble, vinenChi2Sensitivity } from "./estimators/vinen.ts";
import { longitudinalFromTransverse, VelocityCorrelationAccumulator } from "./estimators/correlations.ts";
import { StudyStore } from "../store/db.ts";
import { type EnsembleResultInput, replaceEnsembleResults } from "../store/ensemble.ts";
import { iterateFrames } from "../store/frames.ts";
import {
  type AlignedSeries,
  openStoreReadOnly,
  type PointRecord,
  readAlignedSeries,
  readRealisations,
  readScalars,
  readStudy,
  readStudyPoints,
  type StudyRecord,
} from "../store/reads.ts";
import { domainOf, velocityFieldFor } from "./from_store/engines.ts";
import { commonProfiles } from "./from_store/profiles.ts";
import { replayMsdEnsembles } from "./from_store/replay.ts";
import { AnalysisInputError } from "./errors.ts";

/** Analysis names as stored in `ensemble_results.analysis`. */
export const ANALYSES = [
  "msd-fit",
  "rms-fit",
  "sensitivity",
  "vinen",
  "correlations",
  "evaporation",
] as const;

export interface AnalyseOptions {
  /** Study revision; default the latest. */
  readonly studyId?: number;
  /** Base of the bootstrap seed strings; default the study hash. */
  readonly seed?: string;
  /** Bootstrap replicates of the MSD and RMS-radius fits (default 2000). */
  readonly replicates?: number;
  /** Interval level (default 0.95). */
  readonly level?: number;
  /** χ₂ of the Vinen equation (from a homogeneous decay study); without it the Vinen fit is not available. */
  readonly chi2?: number;
  /** χ₂ range for the sensitivity of the Vinen D (default [χ₂/2, 2χ₂]). */
  readonly chi2Interval?: readonly [number, number];
  /** Bootstrap replicates of the Vinen fit (default 200: each replicate is a full PDE fit). */
  readonly vinenReplicates?: number;
  /** Threshold-sensitivity table by replaying stored frames (default true). */
  readonly sensitivity?: boolean;
  /** Bootstrap replicates of each sensitivity row (default 200). */
  readonly sensitivityReplicates?: number;
  /** Velocity correlations where the engine provides a velocity field (default true). */
  readonly correlations?: boolean;
  /** Progress messages (one line each). */
  readonly onProgress?: (message: string) => void;
}

export type AnalysisStatus = "ok" | "no-diffusive-regime" | "not-available" | "error";

/** An estimate with its interval as shown to the user. */
export interface Estimate {
  readonly status: AnalysisStatus;
  readonly reason: string | null;
  readonly value: number | null;
  readonly lower: number | null;
  readonly upper: number | null;
}

export interface PointAnalysis {
  readonly index: number;
  readonly label: string;
  readonly pointHash: string;
  readonly realisations: number;
  readonly msd: Estimate & {
    readonly window: { readonly t1: number; readonly t2: number } | null;
    readonly tauC: number | null;
    readonly seed: string;
    /** Fraction of bootstrap replicates in which the window rule found no diffusive regime (left out). */
    readonly noRegimeFraction: number | null;
    /** Advice about the fit (few realisations, a marginal regime). */
    readonly warnings: readonly string[];
  };
  readonly radius: Estimate;
  readonly vinen: Estimate;
  readonly sensitivity: {
    readonly status: AnalysisStatus;
    readonly reason: string | null;
    readonly rows: readonly { readonly name: string; readonly D: number | null; readonly status: string }[];
  };
  readonly correlations: { readonly status: AnalysisStatus; readonly reason: string | null };
  readonly evaporation: EvaporationAnalysis;
}

export interface AnalysisSummary {
  readonly studyId: number;
  readonly studyName: string;
  readonly seedBase: string;
  readonly replicates: number;
  readonly dimension: Dimension;
  readonly points: readonly PointAnalysis[];
  readonly rowsWritten: number;
}

function checkOptions(o: AnalyseOptions): void {
  const intAtLeast = (name: string, v: number | undefined, min: number, allowZero = false) => {
    if (v === undefined) return;
    if (!Number.isInteger(v) || (v < min && !(allowZero && v === 0))) {
      throw new AnalysisInputError(
        `${name} must be ${allowZero ? "0 or " : ""}an integer ≥ ${min}, got ${v}`,
      );
    }
  };
  intAtLeast("replicates", o.replicates, 2, true);
  intAtLeast("vinenReplicates", o.vinenReplicates, 2, true);
  intAtLeast("sensitivityReplicates", o.sensitivityReplicates, 2, true);
  if (o.level !== undefined && !(o.level > 0 && o.level < 1)) {
    throw new AnalysisInputError(`level must be in (0, 1), got ${o.level}`);
  }
  if (o.chi2 !== undefined && !(o.chi2 >= 0 && Number.isFinite(o.chi2))) {
    throw new AnalysisInputError(`chi2 must be a finite number ≥ 0, got ${o.chi2}`);
  }
  if (o.chi2Interval !== undefined) {
    const [lo, hi] = o.chi2Interval;
    if (!(lo >= 0 && hi > lo && Number.isFinite(hi))) {
      throw new AnalysisInputError(`the χ₂ range must satisfy 0 ≤ low < high, got [${lo}, ${hi}]`);
    }
  }
  if (o.seed !== undefined && o.seed.length === 0) throw new AnalysisInputError("seed must not be empty");
}

/**
 * Analyses every parameter point of a study revision and replaces its rows in `ensemble_results`. Throws
 * `StoreReadError` when the database cannot be read and `AnalysisInputError` for bad options; a failure of
 * one analysis at one point is stored as a row with status "error" and its message, the rest goes on.
 *
 * @example
 * ```ts
 * const s = await analyseStudy("walkers.sqlite", { replicates: 500, seed: "talk-2026" });
 * console.log(s.points[0].msd); // { status: "ok", value: 0.24, lower: 0.2, upper: 0.27, … }
 * ```
 */
export async function analyseStudy(dbPath: string, opts: AnalyseOptions = {}): Promise<AnalysisSummary> {
  checkOptions(opts);
  const progress = opts.onProgress ?? (() => {});
  const db = openStoreReadOnly(dbPath);
  const rows: EnsembleResultInput[] = [];
  const points: PointAnalysis[] = [];
  let study: StudyRecord;
  let dimension: Dimension = 2;
  const seedBase = opts.seed ?? "";
  const B = opts.replicates ?? 2000;
  try {
    study = readStudy(db, { studyId: opts.studyId });
    const normalized = isRecord(study.normalized) ? study.normalized : {};
    const planned = typeof normalized.realisations === "number" ? normalized.realisations : null;
    const classification = readClassification(normalized);
    const engine = findEngine(study.engineId);
    const studyPoints = readStudyPoints(db, study.id);
    const allDone = studyPoints.map((p) =>
      readRealisations(db, p.pointHash).filter((r) =>
        r.status === "done" && (planned === null || r.index < planned)
      )
    );
    dimension = engine?.capabilities.dimension ?? layoutDimension(db, allDone.flat().map((r) => r.id));
    const base = opts.seed ?? study.studyHash;
    for (let pi = 0; pi < studyPoints.length; pi++) {
      const point = studyPoints[pi];
      const done = allDone[pi];
      const ids = done.map((r) => r.id);
      progress(`point ${pi + 1}/${studyPoints.length} (${point.label}): ${ids.length} done realisations`);
      const ctx: PointContext = {
        db,
        study,
        point,
        ids,
        dimension,
        base,
        B,
        level: opts.level ?? 0.95,
        capabilities: engine?.capabilities ?? null,
        coreRadius: engine?.scales?.(point.params as never)?.coreRadius,
        classification,
        opts,
        progress,
      };
      points.push(await analysePoint(ctx, rows));
    }
  } finally {
    db.close();
  }
  progress("writing results");
  const store = StudyStore.open(dbPath);
  let written: number;
  try {
    written = replaceEnsembleResults(store, study.id, rows);
  } finally {
    store.close();
  }
  return {
    studyId: study.id,
    studyName: study.name,
    seedBase: seedBase || study.studyHash,
    replicates: B,
    dimension,
    points,
    rowsWritten: written,
  };
}

interface PointContext {
  readonly db: DatabaseSync;
  readonly study: StudyRecord;
  readonly point: PointRecord;
  readonly ids: readonly number[];
  readonly dimension: Dimension;
  readonly base: string;
  readonly B: number;
  readonly level: number;
  readonly capabilities: EngineCapabilities | null;
  readonly coreRadius: number | undefined;
  readonly classification: ClassificationConfig | null;
  readonly opts: AnalyseOptions;
  readonly progress: (m: string) => void;
}

/** The MSD ensemble read from the stored series, and what the fit needs besides. */
interface StoredEnsemble {
  readonly input: MsdEnsembleInput;
  readonly timeOrigin: number;
  readonly tCut: number | null;
  readonly tCutRule: string;
}

async function analysePoint(ctx: PointContext, rows: EnsembleResultInput[]): Promise<PointAnalysis> {
  const { point } = ctx;
  const push = (analysis: string, name: string, e: Partial<EnsembleResultInput>) =>
    rows.push({
      pointHash: point.pointHash,
      analysis,
      name,
      value: e.value ?? null,
      lower: e.lower ?? null,
      upper: e.upper ?? null,
      detail: { realisations: ctx.ids.length, realisationIds: [...ctx.ids], ...e.detail },
    });
  const msdSeed = `${ctx.base}/${point.pointHash}/msd`;

  // --- MSD fit and RMS-radius estimate -----------------------------------------------------------------
  let ens: StoredEnsemble | null = null;
  let fit: DiffusionFit | null = null;
  let msd: PointAnalysis["msd"];
  let radius: Estimate;
  try {
    ens = storedEnsemble(ctx);
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

  const sensitivity = await sensitivityRows(ctx, fit, ens, push);
  const vinen = vinenRows(ctx, fit, push);
  const correlations = correlationRows(ctx, fit, push);
  const evaporation = evaporationRows({
    db: ctx.db,
    ids: ctx.ids,
    dimension: ctx.dimension,
    seed: `${ctx.base}/${point.pointHash}/evaporation`,
    replicates: ctx.B,
    level: ctx.level,
  }, push);
  return {
    index: point.index,
    label: point.label,
    pointHash: point.pointHash,
    realisations: ctx.ids.length,
    msd,
    radius,
    vinen,
    sensitivity,
    correlations,
    evaporation,
  };
}

type Push = (analysis: string, name: string, e: Partial<EnsembleResultInput>) => void;

function missing(status: AnalysisStatus, reason: string): Estimate {
  return { status, reason, value: null, lower: null, upper: null };
}

/** The MSD entry of a point whose fit could not run. */
function msdMissing(status: AnalysisStatus, reason: string, seed: string): PointAnalysis["msd"] {
  return { ...missing(status, reason), window: null, tauC: null, seed, noRegimeFraction: null, warnings: [] };
}

function storedEnsemble(ctx: PointContext): StoredEnsemble | null {
  const { db, ids } = ctx;
  if (ids.length === 0) return null;
  const msd = readAlignedSeries(db, ids, "msd");
  if (msd.k.length === 0) return null;
  const timeOrigin = msd.t[0];
  const t = Float64Array.from(msd.t, (x) => x - timeOrigin);
  const counts = alignTo(readAlignedSeries(db, ids, "msd_count"), msd.k, 0);
  const rms = alignTo(readAlignedSeries(db, ids, "cluster_rms_radius"), msd.k, Number.NaN);
  const main = alignTo(readAlignedSeries(db, ids, "main_count"), msd.k, 0);
  const input: MsdEnsembleInput = {
    t,
    msd: msd.values,
    ...(counts ? { counts } : {}),
    ...(rms ? { rmsRadius: rms } : {}),
    ...(main ? { mainCount: main } : {}),
  };
  // Quarter-domain cut: the cluster's diameter 2R_rms reaches a quarter of the domain's linear size.
  const domain = domainOf(ctx.study.engineId, ctx.point.params);
  let tCut: number | null = null;
  let tCutRule = domain.kind === "unknown"
    ? "domain size unknown for this engine: no quarter-domain cut"
    : domain.size === null
    ? "unbounded domain: no quarter-domain cut"
    : `t₂ ≤ first t with 2·⟨R_rms⟩ ≥ (domain size ${domain.size})/4`;
  if (domain.size !== null && rms) {
    const limit = domain.size / 8;
    for (let k = 0; k < t.length; k++) {
      let s = 0, n = 0;
      for (const row of rms) {
        if (Number.isFinite(row[k])) {
          s += row[k];
          n++;
        }
      }
      if (n > 0 && s / n >= limit) {
        tCut = t[k] > 0 ? t[k] : null;
        tCutRule += tCut === null ? " (reached at t = 0: ignored)" : "";
        break;
      }
    }
  }
  return { input, timeOrigin, tCut, tCutRule };
}

/** Rows of `a` re-indexed onto frame indices `k` (absent → fill); null when `a` has no data. */
function alignTo(a: AlignedSeries, k: Int32Array, fill: number): Float64Array[] | null {
  if (a.k.length === 0) return null;
  const col = new Map<number, number>();
  a.k.forEach((kk, j) => col.set(kk, j));
  return a.values.map((row) => {
    const out = new Float64Array(k.length).fill(fill);
    k.forEach((kk, j) => {
      const c = col.get(kk);
      if (c !== undefined && Number.isFinite(row[c])) out[j] = row[c];
    });
    return out;
  });
}

function pickInterval(ci: EstimatorCI | null): {
  lower: number | null;
  upper: number | null;
  method: "bca" | "percentile" | null;
} {
  if (ci?.bca) return { lower: ci.bca.lower, upper: ci.bca.upper, method: "bca" };
  if (ci?.percentile) return { lower: ci.percentile.lower, upper: ci.percentile.upper, method: "percentile" };
  return { lower: null, upper: null, method: null };
}

function ciDetail(ci: EstimatorCI | null): Record<string, unknown> {
  return {
    percentile: ci?.percentile ? { lower: ci.percentile.lower, upper: ci.percentile.upper } : null,
    bca: ci?.bca ? { lower: ci.bca.lower, upper: ci.bca.upper } : null,
    bcaNote: ci?.bcaNote ?? null,
    standardError: ci?.standardError ?? null,
  };
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

// --- Threshold sensitivity ----------------------------------------------------------------------------------

const THRESHOLDS = [
  "separationFactor",
  "radiusFactor",
  "stickyFrames",
  "outwardCosine",
  "speedTolerance",
] as const;
const FACTORS = [0.5, 2] as const;

/** The varied configuration for one threshold and factor (see the module comment for the rules). */
export function variedThreshold(
  base: ClassificationConfig,
  name: typeof THRESHOLDS[number],
  factor: number,
): ClassificationConfig {
  let value: number;
  if (name === "stickyFrames") value = Math.max(1, Math.round(base.stickyFrames * factor));
  else if (name === "outwardCosine") {
    const theta = Math.acos(Math.max(-1, Math.min(1, base.outwardCosine)));
    value = Math.cos(Math.min(Math.PI, theta * factor));
  } else value = base[name] * factor;
  return { ...base, [name]: value };
}

async function sensitivityRows(
  ctx: PointContext,
  fit: DiffusionFit | null,
  ens: StoredEnsemble | null,
  push: Push,
): Promise<PointAnalysis["sensitivity"]> {
  const none = (status: AnalysisStatus, reason: string) => {
    push("sensitivity", "base", { value: null, detail: { status, reason } });
    return { status, reason, rows: [] };
  };
  if (ctx.opts.sensitivity === false) return none("not-available", "not requested (--no-sensitivity)");
  if (ens === null) return none("not-available", "no MSD series to compare with");
  if (ctx.capabilities === null) {
    return none(
      "not-available",
      `the engine '${ctx.study.engineId}' is not in this build: its frames cannot be classified`,
    );
  }
  if (ctx.classification === null) {
    return none("not-available", "the stored study has no classification thresholds");
  }
  try {
    const base = ctx.classification;
    const configs: {
      name: string;
      threshold: string | null;
      factor: number;
      config: ClassificationConfig;
    }[] = [
      { name: "base", threshold: null, factor: 1, config: base },
    ];
    for (const th of THRESHOLDS) {
      for (const f of FACTORS) {
        configs.push({ name: `${th}*${f}`, threshold: th, factor: f, config: variedThreshold(base, th, f) });
      }
    }
    const valid = configs.filter((c) => checkClassificationConfig(c.config).length === 0);
    ctx.progress(`  threshold sensitivity: replaying stored frames with ${valid.length} classifications`);
    const controls = readControls(ctx.point.controls);
    const ensembles = replayMsdEnsembles(
      ctx.db,
      ctx.ids,
      { capabilities: ctx.capabilities, controls, coreRadius: ctx.coreRadius },
      valid.map((c) => c.config),
    );
    await Promise.resolve();
    const Bs = ctx.ids.length >= 2 ? (ctx.opts.sensitivityReplicates ?? 200) : 0;
    const seed = `${ctx.base}/${ctx.point.pointHash}/sensitivity`;
    let baseD: number | null = null;
    const out: { name: string; D: number | null; status: string }[] = [];
    for (const c of configs) {
      const problems = checkClassificationConfig(c.config);
      const detailBase = {
        threshold: c.threshold,
        factor: c.factor,
        thresholdValue: c.threshold === null ? null : c.config[c.threshold as keyof ClassificationConfig],
        config: c.config,
        seed,
        replicates: Bs,
        level: ctx.level,
      };
      if (problems.length > 0) {
        push("sensitivity", c.name, {
          value: null,
          detail: { ...detailBase, status: "error", reason: problems.join("; ") },
        });
        out.push({ name: c.name, D: null, status: "error" });
        continue;
      }
      const e = ensembles[valid.indexOf(c)];
      const f = fitDiffusion(e, {
        dimension: ctx.dimension,
        seed,
        replicates: Bs,
        level: ctx.level,
        tCut: ens.tCut ?? undefined,
      });
      const ci = pickInterval(f.ci);
      if (c.threshold === null) baseD = f.D;
      const extra: Record<string, unknown> = {};
      if (c.threshold === null) {
        const stored = fit?.D ?? null;
        extra.storedD = stored;
        extra.matchesStored = stored === f.D ||
          (stored !== null && f.D !== null && Math.abs(stored - f.D) <= 1e-9 * Math.abs(stored));
      } else {
        extra.deltaD = f.D !== null && baseD !== null ? f.D - baseD : null;
        extra.relativeDelta = f.D !== null && baseD !== null && baseD !== 0 ? (f.D - baseD) / baseD : null;
      }
      push("sensitivity", c.name, {
        value: f.D,
        lower: ci.lower,
        upper: ci.upper,
        detail: {
          ...detailBase,
          status: f.status,
          reason: f.reason,
          window: f.window,
          interval: ci.method,
          ...extra,
        },
      });
      out.push({ name: c.name, D: f.D, status: f.status });
    }
    return { status: "ok", reason: null, rows: out };
  } catch (e) {
    return none("error", errorText(e));
  }
}

function readControls(v: unknown): RunControls {
  const c = isRecord(v) ? v : {};
  const num = (x: unknown, d: number) => (typeof x === "number" && Number.isFinite(x) ? x : d);
  return {
    duration: num(c.duration, 1),
    sampleInterval: num(c.sampleInterval, 1),
    tolerance: num(c.tolerance, 1e-8),
    maxDistance: num(c.maxDistance, Number.POSITIVE_INFINITY),
  };
}

function readClassification(normalized: Record<string, unknown>): ClassificationConfig | null {
  const obs = normalized.observables;
  if (!isRecord(obs) || !isRecord(obs.classification)) return null;
  const c = obs.classification;
  const keys = ["separationFactor", "radiusFactor", "stickyFrames", "outwardCosine", "speedTolerance"];
  if (!keys.every((k) => typeof c[k] === "number")) return null;
  return c as unknown as ClassificationConfig;
}

// --- Vinen fit ---------------------------------------------------------------------------------------------

const VINEN_MAX_TIMES = 25;

function vinenRows(ctx: PointContext, fit: DiffusionFit | null, push: Push): Estimate {
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
    const t1 = fit?.window?.t1 ?? lags[0];
    const t2 = fit?.window?.t2 ?? lags[lags.length - 1];
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

// --- Velocity correlations ---------------------------------------------------------------------------------

const CORR_FRAMES = 6;
const PROBE_GRID = 24;
const CORR_BINS = 20;
const CORE_FRACTION = 0.1;

function correlationRows(
  ctx: PointContext,
  fit: DiffusionFit | null,
  push: Push,
): PointAnalysis["correlations"] {
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
    const t1 = fit?.window?.t1 ?? 0;
    const t2 = fit?.window?.t2 ?? Number.POSITIVE_INFINITY;
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

// --- helpers -------------------------------------------------------------------------------------------------

/** Dimension from the first stored frame's layout (a z column means 3D); 2 when no frame is stored. */
function layoutDimension(db: DatabaseSync, ids: readonly number[]): Dimension {
  for (const id of ids) {
    for (const f of iterateFrames(db, id)) return "z" in f.columns ? 3 : 2;
  }
  return 2;
}

function finiteOrNull(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

function errorText(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}
