/**
 * Ensemble analysis of a stored study: from the realisations in the database to answers with honest error
 * bars, stored back as ensemble-level rows (`ensemble_results`) that the report and `spindrift query` read.
 * Nothing here reruns an engine: everything is recomputed from stored series and frames.
 *
 * ```
 *  study database ──read──▶ per parameter point, done realisations (index < planned)
 *     stored frames ──tracks (stored labels; replayed labels, thresholds ×½ and ×2)──▶ diffusionEvidence
 *         ──▶ "diffusion" (answer, three estimators, rule evidence), "sensitivity"
 *     profile.<k> + profile_bin_width ──common bins──▶ Vinen-equation fit (loss term fitted) ──▶ "vinen"
 *     stored frames + engine velocity field at probes ──▶ VelocityCorrelationAccumulator ──▶ "correlations"
 *     evaporated_count, object_count / line_length ──▶ evaporationSummary ──▶ "evaporation"
 *  every point's answer and its bootstrap replicates ──▶ differences, trend ──▶ "question"
 *  ──▶ ensemble_results (all rows of the study revision replaced in one transaction)
 * ```
 *
 * Rules and choices (each recorded in the rows' `detail_json`):
 * - Realisations: those `done` with index below the study's planned count (as the report counts them).
 * - Dimension: the engine's declared dimension; for engines not in this build, from the stored frame layout
 *   (a `z` column means 3D).
 * - Times: lags since each realisation's first frame (the time origin t₀); `timeOrigin` records t₀.
 * - Diffusion (`to_store/diffusion.ts`, `estimators/diffusion.ts`, methods §5.1 and §5.3): bootstrap over
 *   realisations, B = `replicates` (default 2000), BCa where defined, else percentile. Seed strings
 *   `<seed>/<point hash>/<analysis>`, `<seed>` defaulting to the study hash, so a rerun reproduces every
 *   interval bit for bit.
 * - Sensitivity, Vinen fit, velocity correlations, evaporation, the question: see `to_store/sensitivity.ts`,
 *   `to_store/vinen.ts`, `to_store/correlations.ts`, `to_store/evaporation.ts`, `to_store/question.ts`.
 *
 * @example
 * ```ts
 * import { analyseStudy } from "./analyse.ts";
 * const summary = await analyseStudy("runs/film-patch.sqlite", { replicates: 2000 });
 * for (const p of summary.points) console.log(p.label, p.diffusion.status, p.diffusion.value, p.diffusion.reason);
 * ```
 */
import type { Dimension } from "../engines/contract.ts";
import { findEngine } from "../engines/registry.ts";
import { StudyStore } from "../store/db.ts";
import { type EnsembleResultInput, replaceEnsembleResults } from "../store/ensemble.ts";
import {
  openStoreReadOnly,
  readRealisations,
  readStudy,
  readStudyPoints,
  type StudyRecord,
} from "../store/reads.ts";
import { isRecord } from "./_util.ts";
import { layoutDimension, readClassification } from "./from_store/series.ts";
import { type AnalyseOptions, checkOptions } from "./options.ts";
import { correlationRows, type CorrelationsAnalysis } from "./to_store/correlations.ts";
import { type EvaporationAnalysis, evaporationRows } from "./to_store/evaporation.ts";
import { type DiffusionAnalysis, diffusionRows } from "./to_store/diffusion.ts";
import type { PointContext } from "./to_store/rows.ts";
import { type SensitivityAnalysis, sensitivityPlan, sensitivityRows } from "./to_store/sensitivity.ts";
import { readStoredTracks, type StoredTracks } from "./from_store/tracks.ts";
import { errorText } from "./_util.ts";
import { chi2SourceText, type VinenAnalysis, vinenRows } from "./to_store/vinen.ts";
import { questionRows } from "./to_store/question.ts";

export type { AnalyseOptions } from "./options.ts";
export type { AnalysisStatus, Estimate } from "./to_store/rows.ts";
export { variedThreshold } from "./to_store/sensitivity.ts";

/** Analysis names as stored in `ensemble_results.analysis`. */
export const ANALYSES = [
  "diffusion",
  "sensitivity",
  "vinen",
  "correlations",
  "evaporation",
  "question",
] as const;

export interface PointAnalysis {
  readonly index: number;
  readonly label: string;
  readonly pointHash: string;
  readonly realisations: number;
  readonly diffusion: DiffusionAnalysis;
  readonly vinen: VinenAnalysis;
  readonly sensitivity: SensitivityAnalysis;
  readonly correlations: CorrelationsAnalysis;
  readonly evaporation: EvaporationAnalysis;
}

export interface AnalysisSummary {
  readonly studyId: number;
  readonly studyName: string;
  readonly seedBase: string;
  readonly replicates: number;
  readonly dimension: Dimension;
  readonly points: readonly PointAnalysis[];
  /** The study's question answered (differences, trend), one plain sentence each; empty for one point. */
  readonly question: readonly string[];
  /** Where the Vinen fit's χ₂ came from, one line. */
  readonly chi2Source: string;
  readonly rowsWritten: number;
}

/**
 * Analyses every parameter point of a study revision and replaces its rows in `ensemble_results`. Throws
 * `StoreReadError` when the database cannot be read and `AnalysisInputError` for bad options; a failure of
 * one analysis at one point is stored as a row with status "error" and its message, the rest goes on.
 *
 * @example
 * ```ts
 * const s = await analyseStudy("walkers.sqlite", { replicates: 500, seed: "talk-2026" });
 * console.log(s.points[0].diffusion); // { status: "ok", value: 0.24, lower: 0.2, upper: 0.27, … }
 * ```
 */
export async function analyseStudy(dbPath: string, opts: AnalyseOptions = {}): Promise<AnalysisSummary> {
  checkOptions(opts);
  const progress = opts.onProgress ?? (() => {});
  const db = openStoreReadOnly(dbPath);
  const rows: EnsembleResultInput[] = [];
  const points: PointAnalysis[] = [];
  let question: string[] = [];
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
    question = questionRows(
      studyPoints.map((point, i) => ({ point, diffusion: points[i].diffusion })),
      { level: opts.level ?? 0.95, estimator: "diffusion/D (fixed cohort)" },
      rows,
    );
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
    question,
    chi2Source: chi2SourceText(opts.vinenLoss ?? { mode: "free" }, opts.chi2Source),
    rowsWritten: written,
  };
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
  const plan = sensitivityPlan(ctx);
  let tracks: StoredTracks | null = null;
  let diffusion: DiffusionAnalysis;
  try {
    if (ctx.ids.length > 0) {
      ctx.progress(
        `  reading tracks from the stored frames${
          "reason" in plan ? "" : " (and replaying classifications)"
        }`,
      );
      tracks = readStoredTracks(ctx.db, ctx.ids, {
        dimension: ctx.dimension,
        replay: "reason" in plan ? undefined : { context: plan.context, configs: plan.valid },
      });
    }
    diffusion = diffusionRows(ctx, tracks, push);
  } catch (e) {
    const reason = errorText(e);
    push("diffusion", "D", { value: null, detail: { status: "error", reason, reasons: [reason] } });
    diffusion = {
      status: "error",
      reason,
      reasons: [reason],
      value: null,
      lower: null,
      upper: null,
      window: null,
      tauC: null,
      seed: "",
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
  await Promise.resolve();
  const sensitivity = sensitivityRows(ctx, plan, tracks, diffusion, push);
  tracks = null;
  const vinen = vinenRows(ctx, diffusion.window, push);
  const correlations = correlationRows(ctx, diffusion.window, push);
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
    diffusion: { ...diffusion, prepared: null },
    vinen,
    sensitivity,
    correlations,
    evaporation,
  };
}
