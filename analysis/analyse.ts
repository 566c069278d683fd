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
 *     drift.* scalars + the engine's conservation statement ──▶ checkInvariants ──▶ "invariants"
 *  every point's answer and its bootstrap replicates ──▶ differences, trend ──▶ "question"
 *  ──▶ ensemble_results (all rows of the study revision replaced in one transaction)
 * ```
 *
 * Rules and choices (each recorded in the rows' `detail_json`):
 * - Realisations: those `done` with index below the study's planned count (as the report counts them).
 * - Dimension: the engine's declared dimension; for engines not in this build, from the stored frame layout
 *   (a `z` column means 3D).
 * - Times: lags since each realisation's first frame (the time origin t₀); `timeOrigin` records t₀.
 * - Diffusion (`to_store/diffusion.ts`, `estimators/diffusion.ts`, docs/methods.md §5.1 and §5.3): bootstrap over
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
  type PointRecord,
  readRealisations,
  readStudy,
  readStudyPoints,
  type StudyRecord,
} from "../store/reads.ts";
import type { DatabaseSync } from "node:sqlite";
import type { ClassificationConfig } from "../engines/observables/contract.ts";
import { isRecord } from "./_util.ts";
import { AnalysisInputError } from "./errors.ts";
import { layoutDimension, readClassification } from "./from_store/series.ts";
import { type AnalyseOptions, checkOptions } from "./options.ts";
import { correlationRows, type CorrelationsAnalysis } from "./to_store/correlations.ts";
import { type EvaporationAnalysis, evaporationRows } from "./to_store/evaporation.ts";
import { type DiffusionAnalysis, diffusionRows, noDiffusion } from "./to_store/diffusion.ts";
import type { PointContext } from "./to_store/rows.ts";
import { type SensitivityAnalysis, sensitivityPlan, sensitivityRows } from "./to_store/sensitivity.ts";
import { readStoredTracks, type StoredTracks } from "./from_store/tracks.ts";
import { errorText } from "./_util.ts";
import { chi2SourceText, type VinenAnalysis, vinenRows } from "./to_store/vinen.ts";
import { questionRows } from "./to_store/question.ts";
import { invariantRows, type InvariantsAnalysis } from "./to_store/invariants.ts";

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
  "invariants",
] as const;

/**
 * Analyses other commands write into `ensemble_results` (`spindrift pilot`, `spindrift audit`,
 * `spindrift run --until`): `analyse` leaves their rows alone.
 */
export const KEPT_ANALYSES: readonly string[] = ["pilot", "audit", "precision"];

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
  readonly invariants: InvariantsAnalysis;
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
  /** The rows computed, when the options asked not to store them (`store: false`). */
  readonly rows?: readonly EnsembleResultInput[];
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
  const rows: EnsembleResultInput[] = [];
  let points: PointAnalysis[] = [];
  let question: string[] = [];
  const seedBase = opts.seed ?? "";
  const db = openStoreReadOnly(dbPath);
  let setup: StudySetup;
  try {
    setup = studySetup(db, opts);
    const n = setup.points.length;
    const workers = Math.max(1, Math.min(opts.workers ?? (navigator.hardwareConcurrency || 1), n));
    if (workers > 1) {
      points = await analyseInWorkers(dbPath, opts, n, workers, progress, rows);
    } else {
      for (let pi = 0; pi < n; pi++) {
        const r = await analysePointAt(db, setup, pi, opts, progress);
        rows.push(...r.rows);
        points.push(r.point);
      }
    }
    question = questionRows(
      setup.points.map((point, i) => ({ point, diffusion: points[i].diffusion })),
      { level: opts.level ?? 0.95, estimator: "diffusion/D (fixed cohort)" },
      rows,
    );
  } finally {
    db.close();
  }
  const study = setup.study;
  const dimension = setup.dimension;
  const B = setup.B;
  let written = 0;
  if (opts.store !== false) {
    progress("writing results");
    const store = StudyStore.open(dbPath, { command: "analyse" });
    try {
      // Every analysis but those other commands write (their rows stay): also rows of names older builds used.
      const stored = store.db.prepare("SELECT DISTINCT analysis FROM ensemble_results WHERE study_id = ?")
        .all(study.id).map((r) => String(r.analysis));
      const analyses = [...new Set([...ANALYSES, ...stored])].filter((a) => !KEPT_ANALYSES.includes(a));
      written = replaceEnsembleResults(store, study.id, rows, { analyses });
    } finally {
      store.close();
    }
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
    ...(opts.store === false ? { rows } : {}),
  };
}

/** What every point's analysis needs of the study revision. */
export interface StudySetup {
  readonly study: StudyRecord;
  readonly points: readonly PointRecord[];
  /** Done realisation ids per point (index below the planned count). */
  readonly ids: readonly (readonly number[])[];
  readonly dimension: Dimension;
  readonly base: string;
  readonly B: number;
  readonly classification: ClassificationConfig | null;
  readonly engineId: string;
}

/** Reads the study revision, its points and their done realisations. */
export function studySetup(db: DatabaseSync, opts: AnalyseOptions): StudySetup {
  const study = readStudy(db, { studyId: opts.studyId });
  const normalized = isRecord(study.normalized) ? study.normalized : {};
  const planned = typeof normalized.realisations === "number" ? normalized.realisations : null;
  const engine = findEngine(study.engineId);
  const points = readStudyPoints(db, study.id);
  const ids = points.map((p) =>
    readRealisations(db, p.pointHash, { seed: study.seed }).filter((r) =>
      r.status === "done" && (planned === null || r.index < planned)
    )
      .map((r) => r.id)
  );
  return {
    study,
    points,
    ids,
    dimension: engine?.capabilities.dimension ?? layoutDimension(db, ids.flat()),
    base: opts.seed ?? study.studyHash,
    B: opts.replicates ?? 2000,
    classification: readClassification(normalized),
    engineId: study.engineId,
  };
}

/** Analyses point `pi` of the setup; returns its rows and summary. */
export async function analysePointAt(
  db: DatabaseSync,
  setup: StudySetup,
  pi: number,
  opts: AnalyseOptions,
  progress: (m: string) => void,
): Promise<{ rows: EnsembleResultInput[]; point: PointAnalysis }> {
  const point = setup.points[pi];
  const ids = setup.ids[pi];
  const engine = findEngine(setup.engineId);
  progress(`point ${pi + 1}/${setup.points.length} (${point.label}): ${ids.length} done realisations`);
  const ctx: PointContext = {
    db,
    study: setup.study,
    point,
    ids,
    dimension: setup.dimension,
    base: setup.base,
    B: setup.B,
    level: opts.level ?? 0.95,
    capabilities: engine?.capabilities ?? null,
    coreRadius: engine?.scales?.(point.params as never)?.coreRadius,
    kappa: engine?.scales?.(point.params as never)?.circulation ?? 1,
    classification: setup.classification,
    opts,
    progress: (m) => progress(`[${point.label}] ${m.trim()}`),
  };
  const rows: EnsembleResultInput[] = [];
  return { rows, point: await analysePoint(ctx, rows) };
}

/** Messages of `worker.ts`. */
export type AnalysisWorkerMessage =
  | { readonly type: "progress"; readonly message: string }
  | {
    readonly type: "done";
    readonly index: number;
    readonly rows: EnsembleResultInput[];
    readonly point: PointAnalysis;
  }
  | { readonly type: "error"; readonly message: string; readonly inputError: boolean };

/** Points analysed by `workers` module workers (each opens the database read-only); results in point order. */
function analyseInWorkers(
  dbPath: string,
  opts: AnalyseOptions,
  n: number,
  workers: number,
  progress: (m: string) => void,
  rows: EnsembleResultInput[],
): Promise<PointAnalysis[]> {
  const { onProgress: _drop, ...plain } = opts;
  const results: { rows: EnsembleResultInput[]; point: PointAnalysis }[] = new Array(n);
  return new Promise((resolve, reject) => {
    let next = 0, done = 0, failed = false;
    const pool: Worker[] = [];
    const finish = (error?: Error) => {
      for (const w of pool) w.terminate();
      if (error) return reject(error);
      for (const r of results) rows.push(...r.rows);
      resolve(results.map((r) => r.point));
    };
    const give = (w: Worker) => {
      if (next >= n) return;
      w.postMessage({ dbPath, opts: plain, index: next++ });
    };
    for (let q = 0; q < workers; q++) {
      const w = new Worker(new URL("./worker.ts", import.meta.url).href, { type: "module" });
      pool.push(w);
      w.onmessage = (e: MessageEvent<AnalysisWorkerMessage>) => {
        const m = e.data;
        if (failed) return;
        if (m.type === "progress") progress(m.message);
        else if (m.type === "error") {
          failed = true;
          finish(m.inputError ? new AnalysisInputError(m.message) : new Error(m.message));
        } else {
          results[m.index] = { rows: m.rows, point: m.point };
          if (++done === n) finish();
          else give(w);
        }
      };
      w.onerror = (e) => {
        e.preventDefault();
        if (failed) return;
        failed = true;
        finish(new Error(`analysis worker failed: ${e.message}`));
      };
      give(w);
    }
  });
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
    diffusion = noDiffusion("error", reason, "");
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
  const invariants = invariantRows(ctx, push);
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
    invariants,
  };
}
