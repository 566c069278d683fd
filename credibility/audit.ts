/**
 * `spindrift audit DB`: would the answer move if the numerics were finer, or if a modelling distance were
 * different? A subset of each point's realisations is rerun with the same seeds (so every comparison is
 * paired) under the variants of the engine's refinement table (`Engine.refinement`: the "numerics" pass, and
 * on request the "physics" pass), stored in a database of its own, and compared pair by pair.
 *
 * ```
 * study database (read; its writer lock held) ──▶ revision, points, realisations (index, status, wall time)
 *   variant × point ──applyRefinement + paramsSchema──▶ refined point (own point hash) or "not applicable"
 *   subset: indices 0 … n−1 of each point (done or failed), n from --subset, a stored plan, or the budget
 *           (a calibration pair per point measures the refined cost; n = budget × study time / cost of a pair)
 *   planned realisations: key = H(refined point, index, master seed), generator state of the ORIGINAL point
 *   ──worker pool──▶ <study>-audit.sqlite (lineage "<study>-audit"; never read by the study's analysis)
 * compare per point and variant: failures; paired differences of the end-of-run quantities (Student's paired
 *   t) and of D (same bootstrap draws on both sides) ──▶ flags ──▶ ensemble_results rows "audit" of the study
 * ```
 *
 * The flag (docs/methods.md §7.5). A numerics variant flags "numerics not converged" at a point when
 * (a) the study's numerics fail realisations that the refined numerics complete, or (b) for some quantity the
 * paired difference is resolved — its interval at level 1 − 0.05/m excludes 0, m the number of quantities
 * compared there (Bonferroni) — and larger than max(one standard error of the study's own estimate,
 * `accept` × |the study's value|), or (c) D exists on one side only. Condition (b) needs both parts: in chaotic
 * dynamics paired runs decorrelate, so differences of a few study standard errors arise by chance when few
 * pairs are audited, and tiny shifts become "resolved" when the values hardly vary (a single ring). A physics
 * variant uses the same test to say "sensitive".
 */
import { quantitiesFor, readQuantities, subsetDiffusion } from "../analysis/mod.ts";
import {
  type DiffusionEvidence,
  meanAndSd,
  pairedDifference,
  pairedReplicateDifference,
  realisationsFor,
} from "../analysis/estimators/mod.ts";
import { applyRefinement } from "../engines/_refine.ts";
import type { Engine, RefinementVariant, RunControls } from "../engines/contract.ts";
import { findEngine } from "../engines/registry.ts";
import { type NormalizedStudy, type ParameterPoint, pointIdentity, studyHash } from "../study/normalize.ts";
import type { PlannedRealisation } from "../study/plan.ts";
import { runRealisations } from "../study/pool.ts";
import type { Progress } from "../study/progress.ts";
import { hostName, type Provenance, recordStudy, storingHooks } from "../study/runner.ts";
import { deriveSeedState, seedStateHex } from "../study/seeds.ts";
import { StudyStore } from "../store/db.ts";
import { type EnsembleResultInput, readEnsembleResults, replaceEnsembleResults } from "../store/ensemble.ts";
import { realisationKey } from "../store/keys.ts";
import {
  readMeta,
  readRealisations,
  readStudy,
  type RealisationRecord,
  StoreReadError,
} from "../store/reads.ts";
import type { DatabaseSync } from "node:sqlite";

export interface AuditOptions {
  readonly studyId?: number;
  /** Which passes to run (default ["numerics"]). */
  readonly passes?: readonly ("numerics" | "physics")[];
  /** Realisations per point to rerun (overrides the budget and a stored plan). */
  readonly subset?: number;
  /** Share of the study's compute the audit may use, per pass (default 0.25). */
  readonly budget?: number;
  /** Fewest pairs per point (default 4). */
  readonly minPairs?: number;
  /** Relative differences below this are accepted whatever the statistics (default 0.01). */
  readonly accept?: number;
  /** Audit database (default `<study database without .sqlite>-audit.sqlite`). */
  readonly auditDb?: string;
  readonly workers: number;
  readonly provenance: Provenance;
  readonly progress: Progress;
  readonly signal?: AbortSignal;
  readonly onNote?: (line: string) => void;
  /** Bootstrap replicates for D (default 2000). */
  readonly replicates?: number;
}

/** One compared quantity of one variant at one point. */
export interface AuditComparison {
  /** "D" or a quantity name. */
  readonly quantity: string;
  readonly label: string;
  readonly pairs: number;
  readonly incomplete: number;
  /** Means over the pairs: study numerics (a) and variant (b); Δ = b − a with its 95 % interval. */
  readonly meanStudy: number;
  readonly meanVariant: number;
  readonly difference: number;
  readonly lower: number | null;
  readonly upper: number | null;
  /** The interval at the flag's level 1 − 0.05/m. */
  readonly flagLower: number | null;
  readonly flagUpper: number | null;
  /** Standard error of the study's own estimate at this point (all its realisations), and its value. */
  readonly seStudy: number | null;
  readonly studyValue: number | null;
  /** The shift that counts: max(seStudy, accept·|studyValue|). */
  readonly tolerance: number | null;
  readonly flagged: boolean;
  /** Half-width of the flag's interval: the smallest shift these pairs can resolve. */
  readonly resolution: number | null;
  /** True when the pairs resolve shifts of the tolerance's size (resolution ≤ tolerance). */
  readonly resolvable: boolean;
  /** Pearson correlation of the paired values (1: the variant repeats the study; ~0: decorrelated). */
  readonly correlation: number | null;
  /** Standard deviation of the per-pair differences (D: bootstrap standard error × √pairs). */
  readonly sdDifference: number | null;
  /** Pairs that would resolve the tolerance at the present spread of the differences (null: unknown). */
  readonly pairsNeeded: number | null;
  readonly note: string | null;
}

/** One variant at one point. */
export interface AuditVariantResult {
  readonly variant: string;
  readonly pass: "numerics" | "physics";
  readonly changes: readonly string[];
  /** "not-applicable" with the reason, else the verdict. */
  readonly status:
    | "converged"
    | "not-converged"
    | "insensitive"
    | "sensitive"
    | "inconclusive"
    | "not-applicable";
  readonly reasons: readonly string[];
  readonly subset: readonly number[];
  readonly failures: {
    readonly studyFailed: number;
    readonly variantFailed: number;
    /** Study failed, variant done / study done, variant failed. */
    readonly rescued: readonly number[];
    readonly broken: readonly number[];
  };
  readonly comparisons: readonly AuditComparison[];
  /** Wall time of the variant's realisations and of the study's same realisations (s). */
  readonly wallVariant: number;
  readonly wallStudySubset: number;
}

export interface AuditPoint {
  readonly index: number;
  readonly label: string;
  readonly pointHash: string;
  readonly variants: readonly AuditVariantResult[];
}

export interface AuditReport {
  readonly studyName: string;
  readonly studyId: number;
  readonly auditDb: string;
  readonly points: readonly AuditPoint[];
  /** Wall time of every audit realisation and of the whole study (s); their ratio is the audit's cost. */
  readonly wallAudit: number;
  readonly wallStudy: number;
  readonly notes: readonly string[];
  readonly accept: number;
  readonly interrupted: boolean;
}

/** Refused before anything runs (engine not in this build, no refinement table, …), with the fix. */
export class AuditError extends Error {
  readonly hint?: string;
  constructor(message: string, hint?: string) {
    super(message);
    this.name = "AuditError";
    this.hint = hint;
  }
}

/** `<stem>-audit.sqlite` beside the study database. */
export function defaultAuditDb(dbPath: string): string {
  return dbPath.replace(/\.(sqlite3?|db)$/i, "") + "-audit.sqlite";
}

/** A refined copy of one point for one variant, or why it does not apply. */
type Derived =
  | { readonly point: ParameterPoint; readonly derived: ParameterPoint; readonly changes: readonly string[] }
  | { readonly point: ParameterPoint; readonly notApplicable: string };

interface VariantPlan {
  readonly variant: RefinementVariant;
  readonly study: NormalizedStudy | null;
  readonly controls: RunControls | null;
  readonly derived: readonly Derived[];
}

function controlsOf(s: NormalizedStudy): RunControls {
  return {
    duration: s.run.duration,
    sampleInterval: s.run.sampleInterval,
    tolerance: s.run.tolerance,
    maxDistance: s.run.maxDistance,
  };
}

/** The study revision as the runner knows it, rebuilt from the database. */
function storedStudy(db: DatabaseSync, studyId: number | undefined): { study: NormalizedStudy; id: number } {
  const rec = readStudy(db, { studyId });
  const n = rec.normalized as Partial<NormalizedStudy> | null;
  if (!n || !Array.isArray(n.points) || typeof n.realisations !== "number" || !n.run || !n.engine) {
    throw new AuditError(`study revision ${rec.id} has no usable normalized study in the database`);
  }
  return {
    id: rec.id,
    study: { ...(n as NormalizedStudy), text: rec.text, sourcePath: rec.sourcePath ?? "" },
  };
}

/** The variants of the requested passes, applied to every point. */
function planVariants(
  engine: Engine<unknown>,
  study: NormalizedStudy,
  passes: readonly string[],
): VariantPlan[] {
  const table = engine.refinement!;
  return table.variants.filter((v) => passes.includes(v.pass)).map((variant) => {
    let controls: RunControls | null = null;
    const derived = study.points.map((point): Derived => {
      const r = applyRefinement(point.params, controlsOf(study), variant);
      if ("notApplicable" in r) return { point, notApplicable: r.notApplicable };
      const parsed = engine.paramsSchema.safeParse(r.params);
      if (!parsed.success) {
        const issue = parsed.error.issues[0];
        return {
          point,
          notApplicable: `the refined parameters leave the engine's range (${issue?.path.join(".")}: ${
            issue?.message ?? "invalid"
          })`,
        };
      }
      controls = r.controls;
      const run = { ...study.run, ...r.controls };
      const id = pointIdentity({
        engine: study.engine,
        params: parsed.data,
        run,
        observables: study.observables,
        inputs: Object.keys(point.inputs).length > 0 ? point.inputs : null,
      });
      return { point, derived: { ...point, params: parsed.data, ...id }, changes: r.changes };
    });
    const live = derived.flatMap((d) => ("derived" in d ? [d.derived] : []));
    if (live.length === 0 || controls === null) return { variant, study: null, controls: null, derived };
    const c: RunControls = controls;
    const fields = {
      name: `${study.name}-audit`,
      description: `numerical audit of study '${study.name}' (hash ${
        study.hash.slice(0, 12)
      }): ${variant.id}`,
      engine: study.engine,
      realisations: study.realisations,
      seed: study.seed,
      run: { ...study.run, ...c },
      observables: study.observables,
      points: live.map((p, k) => ({ ...p, index: k })),
    };
    return {
      variant,
      controls: c,
      derived,
      study: { ...fields, hash: studyHash(fields), text: study.text, sourcePath: study.sourcePath },
    };
  });
}

/** Planned realisations of a variant: refined point, original generator state (pairing). */
function plannedFor(plan: VariantPlan, subset: ReadonlyMap<string, readonly number[]>): PlannedRealisation[] {
  const s = plan.study!;
  const out: PlannedRealisation[] = [];
  for (const d of plan.derived) {
    if (!("derived" in d)) continue;
    const k = s.points.findIndex((p) => p.pointHash === d.derived.pointHash);
    for (const index of subset.get(d.point.pointHash) ?? []) {
      const seedState = deriveSeedState(s.seed, d.point.paramsHash, index);
      out.push({
        key: realisationKey(d.derived.pointHash, index, s.seed),
        pointIndex: k,
        pointHash: d.derived.pointHash,
        index,
        seedState,
        seedHex: seedStateHex(seedState),
      });
    }
  }
  return out.sort((a, b) => a.index - b.index || a.pointIndex - b.pointIndex);
}

/** Runs `todo` into the audit store (resuming); false when stopped. */
async function runInto(
  store: StudyStore,
  plan: VariantPlan,
  todo: readonly PlannedRealisation[],
  opts: AuditOptions,
): Promise<boolean> {
  const statuses = store.realisationStatuses();
  const left = todo.filter((r) => statuses.get(r.key) !== "done" && statuses.get(r.key) !== "failed");
  if (left.length === 0) return true;
  recordStudy(store, plan.study!, opts.provenance);
  let done = 0;
  const hooks = storingHooks(store, plan.study!, hostName(), () => opts.progress.update(++done, 0));
  opts.progress.start(left.length, 0);
  try {
    const { interrupted } = await runRealisations(plan.study!, left, opts.workers, hooks.hooks, opts.signal);
    if (interrupted) store.discardUnfinished();
    return !interrupted;
  } finally {
    opts.progress.stop();
  }
}

/** The study's realisations of a point under its master seed, index below the planned count, by index. */
function studyRows(
  db: DatabaseSync,
  study: NormalizedStudy,
  pointHash: string,
): Map<number, RealisationRecord> {
  return new Map(
    readRealisations(db, pointHash, { seed: study.seed })
      .filter((r) => r.index < study.realisations && r.status !== "running")
      .map((r) => [r.index, r]),
  );
}

const PLAN_KEY = "audit_plan";

/** Runs the audit and stores its rows in the study database (see the module comment). */
export async function runAudit(dbPath: string, opts: AuditOptions): Promise<AuditReport> {
  const passes = opts.passes ?? ["numerics"];
  const budget = opts.budget ?? 0.25;
  const minPairs = opts.minPairs ?? 4;
  const accept = opts.accept ?? 0.01;
  const auditDb = opts.auditDb ?? defaultAuditDb(dbPath);
  // The study database: its writer lock for the whole audit, so no run changes it meanwhile.
  const studyStore = StudyStore.open(dbPath, { command: "audit" });
  try {
    const { study, id: studyId } = storedStudy(studyStore.db, opts.studyId);
    const engine = findEngine(study.engine.id);
    if (!engine) {
      throw new AuditError(`engine ${study.engine.id} is not in this build: the study cannot be rerun`);
    }
    if (engine.version !== study.engine.version) {
      throw new AuditError(
        `the study was computed with ${engine.id} ${study.engine.version}; this build has ${engine.version}, so ` +
          "refined reruns would not be comparable with it",
        "run the study again with this build (spindrift run), then audit it",
      );
    }
    if (!engine.refinement) {
      throw new AuditError(
        `the engine ${engine.id} has no refinement table: its numerics are not spindrift's to refine ` +
          "(imported data, external programs)",
      );
    }
    const plans = planVariants(engine, study, passes);
    if (plans.length === 0) {
      throw new AuditError(`the engine ${engine.id} has no ${passes.join("/")} variant`);
    }
    const rows = new Map(
      study.points.map((p) => [p.pointHash, studyRows(studyStore.db, study, p.pointHash)]),
    );
    const store = StudyStore.open(auditDb, { command: "audit" });
    const notes: string[] = [...(engine.refinement.notes ?? [])];
    let interrupted = false;
    try {
      for (const n of store.notes) opts.onNote?.(n);
      store.discardUnfinished();
      for (const pass of passes) {
        const passPlans = plans.filter((p) => p.variant.pass === pass && p.study !== null);
        if (passPlans.length === 0) continue;
        const key = `${PLAN_KEY}/${study.hash}/${pass}`;
        const stored = readMeta(store.db)[key];
        let sizes: Record<string, number>;
        if (opts.subset !== undefined) {
          sizes = Object.fromEntries(study.points.map((p) => [p.pointHash, opts.subset!]));
        } else if (stored !== undefined) {
          sizes = (JSON.parse(stored) as { sizes: Record<string, number> }).sizes;
          opts.onNote?.(`${pass}: reusing the subset chosen by the first audit (${describeSizes(sizes)})`);
        } else {
          const calibrated = await calibrate(store, passPlans, rows, { ...opts, budget, minPairs });
          if (calibrated === null) {
            interrupted = true;
            break;
          }
          sizes = calibrated.sizes;
          notes.push(...calibrated.notes);
        }
        store.setMeta(key, JSON.stringify({ sizes, budget, at: new Date().toISOString() }));
        const subset = subsetFor(rows, sizes);
        for (const plan of passPlans) {
          if (!(await runInto(store, plan, plannedFor(plan, subset), opts))) {
            interrupted = true;
            break;
          }
        }
        if (interrupted) break;
      }
      if (interrupted) {
        return {
          studyName: study.name,
          studyId,
          auditDb,
          points: [],
          wallAudit: 0,
          wallStudy: 0,
          notes,
          accept,
          interrupted: true,
        };
      }
      // Compare every variant whose plan is stored (an earlier numerics pass stays in the rows of a later
      // physics pass).
      const meta = readMeta(store.db);
      const storedPasses = (["numerics", "physics"] as const).filter((p) =>
        meta[`${PLAN_KEY}/${study.hash}/${p}`] !== undefined
      );
      const all = planVariants(engine, study, storedPasses);
      const report = compareAll(studyStore.db, store.db, study, all, {
        sizes: Object.fromEntries(
          storedPasses.map((p) => [p, JSON.parse(meta[`${PLAN_KEY}/${study.hash}/${p}`]).sizes]),
        ),
        rows,
        accept,
        replicates: opts.replicates ?? 2000,
        engine,
      });
      const wallStudy = [...rows.values()].flatMap((m) => [...m.values()]).reduce(
        (a, r) => a + (r.wallSeconds ?? 0),
        0,
      );
      const wallAudit = report.reduce((a, p) => a + p.variants.reduce((b, v) => b + v.wallVariant, 0), 0);
      const out: AuditReport = {
        studyName: study.name,
        studyId,
        auditDb,
        points: report,
        wallAudit,
        wallStudy,
        notes,
        accept,
        interrupted: false,
      };
      // One audit's rows as a whole: they replace the previous audit's (which may have compared other variants).
      replaceEnsembleResults(studyStore, studyId, auditRows(out, study), {
        analyses: ["audit"],
        whole: true,
      });
      return out;
    } finally {
      store.close();
    }
  } finally {
    studyStore.close();
  }
}

function describeSizes(sizes: Record<string, number>): string {
  const v = [...new Set(Object.values(sizes))];
  return v.length === 1 ? `${v[0]} per point` : `${Math.min(...v)}–${Math.max(...v)} per point`;
}

/** Indices 0 … n−1 of each point that the study finished (done or failed). */
function subsetFor(
  rows: ReadonlyMap<string, ReadonlyMap<number, RealisationRecord>>,
  sizes: Record<string, number>,
): Map<string, number[]> {
  const out = new Map<string, number[]>();
  for (const [hash, m] of rows) {
    const idx = [...m.keys()].sort((a, b) => a - b);
    out.set(hash, idx.slice(0, Math.max(0, sizes[hash] ?? 0)));
  }
  return out;
}

/**
 * Runs the first subset realisation of every variant and point, compares its wall time with the study's same
 * realisation (ratio ρ: what the variants of one realisation cost relative to the study's) and sizes each
 * point's subset to the budget: n = ⌊budget × N / ρ⌋, clamped to [minPairs, N] (N the point's realisations).
 * Null when stopped.
 */
async function calibrate(
  store: StudyStore,
  plans: readonly VariantPlan[],
  rows: ReadonlyMap<string, ReadonlyMap<number, RealisationRecord>>,
  opts: AuditOptions & { readonly budget: number; readonly minPairs: number },
): Promise<{ sizes: Record<string, number>; notes: string[] } | null> {
  const first = subsetFor(rows, Object.fromEntries([...rows.keys()].map((h) => [h, 1])));
  for (const plan of plans) {
    if (!(await runInto(store, plan, plannedFor(plan, first), opts))) return null;
  }
  const sizes: Record<string, number> = {};
  const notes: string[] = [];
  const audit = store.db;
  {
    for (const [hash, m] of rows) {
      const idx = first.get(hash)?.[0];
      if (idx === undefined) {
        sizes[hash] = 0;
        continue;
      }
      const ref = m.get(idx)?.wallSeconds ?? Number.NaN;
      let pair = 0;
      for (const plan of plans) {
        const d = plan.derived.find((x) => x.point.pointHash === hash);
        if (!d || !("derived" in d)) continue;
        const r = readRealisations(audit, d.derived.pointHash, { seed: plan.study!.seed }).find((x) =>
          x.index === idx
        );
        pair += r?.wallSeconds ?? ref;
      }
      // Cost of one pair's variants relative to the study's same realisation, applied to the study's mean.
      const ratio = ref > 0 ? pair / ref : Number.NaN;
      const n = Number.isFinite(ratio) && ratio > 0 ? Math.floor((opts.budget * m.size) / ratio) : m.size;
      const clamped = Math.min(m.size, Math.max(opts.minPairs, n));
      sizes[hash] = clamped;
      if (n < opts.minPairs && m.size > n) {
        const pct = Math.round(100 * opts.budget);
        notes.push(
          `the budget (${pct} % of the study's time) allows ${n} pair(s) at a point where the variants of one ` +
            `realisation cost ${ratio.toPrecision(2)}× the study's; using the minimum ${clamped} (≈ ${
              Math.round((100 * clamped * ratio) / m.size)
            } % of the study's time there)`,
        );
      }
    }
  }
  return { sizes, notes };
}

interface CompareContext {
  readonly sizes: Record<string, Record<string, number>>;
  readonly rows: ReadonlyMap<string, ReadonlyMap<number, RealisationRecord>>;
  readonly accept: number;
  readonly replicates: number;
  readonly engine: Engine<unknown>;
}

function compareAll(
  studyDb: DatabaseSync,
  auditDb: DatabaseSync,
  study: NormalizedStudy,
  plans: readonly VariantPlan[],
  ctx: CompareContext,
): AuditPoint[] {
  const dimension = ctx.engine.capabilities.dimension;
  const studyD = storedDiffusion(studyDb, study);
  return study.points.map((point) => {
    const m = ctx.rows.get(point.pointHash)!;
    const allDone = [...m.values()].filter((r) => r.status === "done").map((r) => r.id);
    const variants = plans.map((plan): AuditVariantResult => {
      const d = plan.derived.find((x) => x.point.pointHash === point.pointHash)!;
      const head = { variant: plan.variant.id, pass: plan.variant.pass };
      const none = (reason: string): AuditVariantResult => ({
        ...head,
        changes: [],
        status: "not-applicable",
        reasons: [reason],
        subset: [],
        failures: { studyFailed: 0, variantFailed: 0, rescued: [], broken: [] },
        comparisons: [],
        wallVariant: 0,
        wallStudySubset: 0,
      });
      if (!("derived" in d)) return none(d.notApplicable);
      const subset = subsetFor(ctx.rows, ctx.sizes[plan.variant.pass] ?? {}).get(point.pointHash) ?? [];
      const audit = new Map(
        readRealisations(auditDb, d.derived.pointHash, { seed: study.seed }).map((r) => [r.index, r]),
      );
      const pairs = subset.filter((i) => audit.has(i) && m.has(i));
      if (pairs.length === 0) return none("no audit realisation stored for this point");
      const rescued = pairs.filter((i) => m.get(i)!.status === "failed" && audit.get(i)!.status === "done");
      const broken = pairs.filter((i) => m.get(i)!.status === "done" && audit.get(i)!.status === "failed");
      const both = pairs.filter((i) => m.get(i)!.status === "done" && audit.get(i)!.status === "done");
      const idsA = both.map((i) => m.get(i)!.id), idsB = both.map((i) => audit.get(i)!.id);
      const names = quantitiesFor(dimension).map((q) => q.name);
      const qa = readQuantities(studyDb, idsA, names), qb = readQuantities(auditDb, idsB, names);
      const qAll = readQuantities(studyDb, allDone, names);
      const seeds = `audit/${point.pointHash}/${plan.variant.id}`;
      const dOf = (db: DatabaseSync, params: unknown, ids: number[]) =>
        ids.length >= 2
          ? subsetDiffusion(db, { engineId: study.engine.id, params, dimension }, ids, {
            seed: seeds,
            replicates: ctx.replicates,
          })
          : null;
      const dStudy = dOf(studyDb, point.params, idsA), dVariant = dOf(auditDb, d.derived.params, idsB);
      const bothD = dStudy?.status === "ok" && dVariant?.status === "ok";
      // An MSD far below the cluster's size squared is round-off of a rigid motion (e.g. one ring): not judged.
      const size = meanAndSd(qAll.cluster_radius ?? []).mean;
      const rigid = (name: string) =>
        name === "msd_final" && Number.isFinite(size) &&
        [...qa[name], ...qb[name]].every((v) => !(Math.abs(v) > 1e-12 * size * size));
      const compared = names.filter((n) => pairedDifference(qa[n], qb[n]).n > 0 && !rigid(n));
      // Bonferroni over the quantities compared at this point: the flag's interval level.
      const level = 1 - 0.05 / Math.max(1, compared.length + (bothD ? 1 : 0));
      const dCompare = compareDiffusion(
        dStudy,
        dVariant,
        studyD.get(point.pointHash) ?? null,
        both.length,
        level,
      );
      const judged: AuditComparison[] = [];
      if (dCompare.comparison) judged.push(judge(dCompare.comparison, ctx.accept, level));
      for (const q of quantitiesFor(dimension)) {
        if (!compared.includes(q.name)) continue;
        const p = pairedDifference(qa[q.name], qb[q.name]);
        const wide = pairedDifference(qa[q.name], qb[q.name], { level });
        const all = meanAndSd(qAll[q.name]);
        judged.push(judge(
          {
            quantity: q.name,
            label: q.label,
            pairs: p.n,
            incomplete: p.incomplete,
            meanStudy: p.meanA,
            meanVariant: p.meanB,
            difference: p.mean,
            lower: p.lower,
            upper: p.upper,
            flagLower: wide.lower,
            flagUpper: wide.upper,
            seStudy: all.n > 1 ? all.sd / Math.sqrt(all.n) : null,
            studyValue: all.n > 0 ? all.mean : null,
            correlation: correlation(qa[q.name], qb[q.name]),
            sdDifference: Number.isFinite(p.sd) ? p.sd : null,
            note: null,
          },
          ctx.accept,
          level,
        ));
      }
      const reasons: string[] = [];
      if (rescued.length > 0) {
        reasons.push(
          `the study's numerics failed ${rescued.length} of ${pairs.length} audited realisations that the ` +
            `variant completes (indices ${rescued.slice(0, 6).join(", ")}${
              rescued.length > 6 ? ", …" : ""
            }: ` +
            `${firstError(m, rescued)})`,
        );
      }
      if (dCompare.oneSided) reasons.push(dCompare.oneSided);
      for (const c of judged) {
        if (c.flagged) {
          reasons.push(
            `${c.quantity} moves by ${fmt(c.difference)} [${fmt(c.lower)}, ${fmt(c.upper)}], more than ${
              fmt(c.tolerance)
            } (${
              c.tolerance === c.seStudy
                ? "one standard error of the study's estimate"
                : `${100 * ctx.accept} % of its value`
            })`,
          );
        }
      }
      const moved = reasons.length > 0;
      const blind = judged.filter((c) => !c.resolvable && c.tolerance !== null);
      const numerics = plan.variant.pass === "numerics";
      const status = moved
        ? (numerics ? "not-converged" : "sensitive")
        : blind.length > 0
        ? "inconclusive"
        : (numerics ? "converged" : "insensitive");
      if (!moved && blind.length > 0) {
        const total = m.size;
        reasons.push(
          `the ${pairs.length} pairs cannot see a shift of the study's precision in ${
            blind.map((c) =>
              `${c.quantity} (they resolve ±${fmt(c.resolution)}, ${
                fmt(c.resolution! / c.tolerance!)
              }× the ` +
              `tolerance ±${fmt(c.tolerance)}${
                c.correlation !== null ? `; pair correlation ${c.correlation.toFixed(2)}` : ""
              }; ≈ ${c.pairsNeeded} pairs would)`
            ).join(", ")
          }` +
            (blind.some((c) => (c.pairsNeeded ?? 0) > total)
              ? `: more than the study's ${total}, because the paired runs decorrelate (chaotic dynamics): ` +
                "the audit bounds these shifts but cannot confirm convergence at the study's precision"
              : ": rerun with a larger --subset or --budget"),
        );
      }
      if (broken.length > 0) {
        reasons.push(
          `the variant failed ${broken.length} realisation(s) the study completed (indices ${
            broken.slice(0, 6).join(", ")
          }: ${firstError(audit, broken)}): those pairs are left out`,
        );
      }
      if (dCompare.note) reasons.push(dCompare.note);
      return {
        ...head,
        changes: d.changes,
        status,
        reasons,
        subset: pairs,
        failures: {
          studyFailed: pairs.filter((i) => m.get(i)!.status === "failed").length,
          variantFailed: pairs.filter((i) => audit.get(i)!.status === "failed").length,
          rescued,
          broken,
        },
        comparisons: judged,
        wallVariant: pairs.reduce((a, i) => a + (audit.get(i)!.wallSeconds ?? 0), 0),
        wallStudySubset: pairs.reduce((a, i) => a + (m.get(i)!.wallSeconds ?? 0), 0),
      };
    });
    return { index: point.index, label: point.label, pointHash: point.pointHash, variants };
  });
}

function firstError(m: ReadonlyMap<number, RealisationRecord>, idx: readonly number[]): string {
  const r = m.get(idx[0]);
  return `${r?.failureKind ?? "failed"}${r?.error ? `: ${r.error.slice(0, 120)}` : ""}`;
}

type Judged = "flagged" | "tolerance" | "resolution" | "resolvable" | "pairsNeeded";

/** The flag test of the module comment, on one comparison, and whether the pairs could have seen a shift. */
function judge(c: Omit<AuditComparison, Judged>, accept: number, level: number): AuditComparison {
  const floor = c.studyValue !== null ? accept * Math.abs(c.studyValue) : 0;
  const tolerance = c.seStudy !== null ? Math.max(c.seStudy, floor) : floor > 0 ? floor : null;
  const resolved = c.flagLower !== null && c.flagUpper !== null && (c.flagLower > 0 || c.flagUpper < 0);
  const flagged = resolved && tolerance !== null && Math.abs(c.difference) > tolerance;
  const resolution = c.flagLower !== null && c.flagUpper !== null
    ? Math.max(c.flagUpper - c.difference, c.difference - c.flagLower)
    : null;
  const resolvable = resolution !== null && tolerance !== null && resolution <= tolerance;
  // Pairs whose interval at the flag's level, with the differences' present spread, is ±tolerance wide.
  const pairsNeeded = !resolvable && tolerance !== null && tolerance > 0 && c.sdDifference !== null
    ? realisationsFor(c.sdDifference, tolerance, level)
    : null;
  return { ...c, tolerance, flagged, resolution, resolvable, pairsNeeded };
}

/** Pearson correlation of the finite pairs (null below 3 pairs or without spread). */
function correlation(a: ArrayLike<number>, b: ArrayLike<number>): number | null {
  const x: number[] = [], y: number[] = [];
  for (let i = 0; i < a.length; i++) {
    if (Number.isFinite(a[i]) && Number.isFinite(b[i])) {
      x.push(a[i]);
      y.push(b[i]);
    }
  }
  if (x.length < 3) return null;
  const mx = x.reduce((p, q) => p + q, 0) / x.length, my = y.reduce((p, q) => p + q, 0) / y.length;
  let sxy = 0, sxx = 0, syy = 0;
  for (let i = 0; i < x.length; i++) {
    sxy += (x[i] - mx) * (y[i] - my);
    sxx += (x[i] - mx) ** 2;
    syy += (y[i] - my) ** 2;
  }
  return sxx > 0 && syy > 0 ? sxy / Math.sqrt(sxx * syy) : null;
}

/** The stored answer D of the study at each point (for its standard error), when analyse found one. */
function storedDiffusion(
  db: DatabaseSync,
  study: NormalizedStudy,
): Map<string, { value: number; se: number | null }> {
  const out = new Map<string, { value: number; se: number | null }>();
  const row = db.prepare("SELECT id FROM studies WHERE study_hash = ?").get(study.hash) as
    | { id: number }
    | undefined;
  if (!row) return out;
  for (const r of readEnsembleResults(db, Number(row.id), { analysis: "diffusion" })) {
    if (r.name !== "D" || r.value === null) continue;
    const se = typeof r.detail.standardError === "number" ? r.detail.standardError : null;
    out.set(r.pointHash, { value: r.value, se });
  }
  return out;
}

/** D on both sides with the same bootstrap draws; or why it cannot be compared. */
function compareDiffusion(
  a: DiffusionEvidence | null,
  b: DiffusionEvidence | null,
  stored: { value: number; se: number | null } | null,
  pairs: number,
  level: number,
): {
  comparison: Omit<AuditComparison, Judged> | null;
  oneSided: string | null;
  note: string | null;
} {
  const okA = a?.status === "ok" && a.replicates !== null, okB = b?.status === "ok" && b.replicates !== null;
  if (!okA && !okB) {
    return {
      comparison: null,
      oneSided: null,
      note: "D: no diffusive regime on either side of the audited pairs, so no D to compare (the other " +
        "quantities, MSD included, are compared)",
    };
  }
  if (okA !== okB) {
    const [has, lacks] = okA
      ? ["the study's numerics", "the variant"]
      : ["the variant", "the study's numerics"];
    const why = (okA ? b : a)?.reasons[0] ?? "no estimate";
    return {
      comparison: null,
      oneSided: `D: ${has} find a diffusive regime on the audited pairs, ${lacks} do not (${why})`,
      note: null,
    };
  }
  const A = { value: a!.answer!.D, replicates: a!.replicates! };
  const B = { value: b!.answer!.D, replicates: b!.replicates! };
  const d = pairedReplicateDifference(A, B);
  const wide = pairedReplicateDifference(A, B, { level });
  return {
    comparison: {
      quantity: "D",
      label: "D (fixed cohort; the answer)",
      pairs,
      incomplete: 0,
      meanStudy: A.value,
      meanVariant: B.value,
      difference: d.mean,
      lower: d.lower,
      upper: d.upper,
      flagLower: wide.lower,
      flagUpper: wide.upper,
      seStudy: stored?.se ?? a!.estimators.cohort?.ci?.standardError ?? null,
      studyValue: stored?.value ?? A.value,
      correlation: null,
      sdDifference: d.standardError !== null ? d.standardError * Math.sqrt(pairs) : null,
      note: stored
        ? null
        : "the study's standard error from the audited pairs (run analyse for the full one)",
    },
    oneSided: null,
    note: null,
  };
}

function fmt(x: number | null): string {
  if (x === null || !Number.isFinite(x)) return "—";
  const a = Math.abs(x);
  return a !== 0 && (a >= 1e4 || a < 1e-3) ? x.toExponential(2) : String(Number(x.toPrecision(3)));
}

/** The `audit` rows of the study database (names documented in DEVELOPERS.md). */
export function auditRows(r: AuditReport, study: NormalizedStudy): EnsembleResultInput[] {
  const rows: EnsembleResultInput[] = [];
  for (const p of r.points) {
    for (const v of p.variants) {
      rows.push({
        pointHash: p.pointHash,
        analysis: "audit",
        name: `${v.variant}/summary`,
        value: null,
        detail: {
          status: v.status,
          pass: v.pass,
          variant: v.variant,
          changes: v.changes,
          reasons: v.reasons,
          subset: v.subset,
          failures: v.failures,
          wallVariant: v.wallVariant,
          wallStudySubset: v.wallStudySubset,
          auditDb: r.auditDb,
          accept: r.accept,
        },
      });
      for (const c of v.comparisons) {
        rows.push({
          pointHash: p.pointHash,
          analysis: "audit",
          name: `${v.variant}/${c.quantity}`,
          value: c.difference,
          lower: c.lower,
          upper: c.upper,
          detail: { ...c, variant: v.variant, pass: v.pass, definition: "paired difference variant − study" },
        });
      }
    }
  }
  if (r.points.length > 0) {
    rows.push({
      pointHash: r.points[0].pointHash,
      analysis: "audit",
      name: "settings",
      value: r.wallStudy > 0 ? r.wallAudit / r.wallStudy : null,
      detail: {
        definition: "value: wall time of every audit realisation / wall time of the whole study",
        auditDb: r.auditDb,
        wallAudit: r.wallAudit,
        wallStudy: r.wallStudy,
        accept: r.accept,
        notes: r.notes,
        engine: study.engine,
        rule: "flagged when the study's numerics fail realisations the variant completes, when D exists on " +
          "one side only, or when a paired difference is resolved (its interval at level 1 − 0.05/m excludes " +
          "0; m quantities compared) and exceeds max(one standard error of the study's estimate, accept × " +
          "|its value|)",
      },
    });
  }
  return rows;
}

/** The report as lines for the terminal. */
export function formatAudit(r: AuditReport): string[] {
  const lines: string[] = [`audit of ${r.studyName} (revision #${r.studyId}); reruns stored in ${r.auditDb}`];
  for (const p of r.points) {
    lines.push(`  point ${p.index} (${p.label}):`);
    for (const v of p.variants) {
      const verdict = v.status === "not-converged"
        ? "NUMERICS NOT CONVERGED"
        : v.status === "sensitive"
        ? "SENSITIVE"
        : v.status === "inconclusive"
        ? "inconclusive (nothing moved, but the pairs cannot resolve the study's precision)"
        : v.status;
      lines.push(
        `    ${v.variant} (${v.changes.join("; ") || "—"}): ${verdict}` +
          (v.subset.length > 0 ? `, ${v.subset.length} pairs` : ""),
      );
      for (const c of v.comparisons) {
        lines.push(
          `      ${c.quantity.padEnd(15)} study ${fmt(c.meanStudy)}, variant ${fmt(c.meanVariant)}: Δ ${
            fmt(c.difference)
          } [${fmt(c.lower)}, ${fmt(c.upper)}] vs ±${fmt(c.tolerance)}${
            c.flagged ? "  ✗" : c.resolvable ? "" : "  (not resolvable)"
          }`,
        );
      }
      for (const why of v.reasons) lines.push(`      ${v.status === "not-applicable" ? "" : "why: "}${why}`);
    }
  }
  if (r.wallStudy > 0) {
    lines.push(
      `  cost: ${fmt(r.wallAudit)} s of reruns for ${fmt(r.wallStudy)} s of study (${
        Math.round((100 * r.wallAudit) / r.wallStudy)
      } %; wall times, noisy on a shared machine)`,
    );
  }
  for (const n of r.notes) lines.push(`  note: ${n}`);
  lines.push(
    "  rule: flagged when the study's numerics fail where the variant does not, when D exists on one side only, " +
      `or when a paired difference is resolved (Bonferroni over the quantities) and larger than one standard ` +
      `error of the study's estimate and ${100 * r.accept} % of its value`,
  );
  return lines;
}

export { StoreReadError };
