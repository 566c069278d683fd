/**
 * `spindrift pilot`: run the first few realisations of every parameter point, measure what each costs, and
 * project the whole study — time on this machine and as a Slurm array, database growth, and the precision of
 * D and of the other end-of-run quantities against the number of realisations — before anyone commits a
 * week of cluster time.
 *
 * ```
 * study ──runStudy(only index < n)──▶ study database (the study's own first realisations: `run` keeps them)
 *        │ worker usage per realisation: thread CPU time, peak memory (study/usage.ts); file growth
 *        ▼
 * readQuantities / subsetDiffusion (analysis/) ──▶ spread per point ──▶ projectSpread ──▶ half-width(N), N(target)
 *        ▼
 * ensemble_results rows (analysis "pilot") + the printed estimate; `spindrift check` shows the last one
 * ```
 *
 * Honesty rules: D is projected only when the pilot's realisations already show a diffusive regime; otherwise
 * the estimate says so, with the rule's reason, and projects what can be projected (evaporation and the other
 * quantities, and the spread of the fixed cohort's fitted slope when a window exists, labelled as not a D).
 * The pilot's realisations are the study's first ones (same keys and seeds), so they are not wasted.
 */
import { statSync } from "node:fs";
import { quantitiesFor, readQuantities, subsetDiffusion } from "../analysis/mod.ts";
import { type DiffusionEvidence, meanAndSd } from "../analysis/estimators/mod.ts";
import { findEngine } from "../engines/registry.ts";
import type { NormalizedStudy } from "../study/normalize.ts";
import type { PlannedRealisation } from "../study/plan.ts";
import { estimateStudy, formatBytes } from "../study/preflight.ts";
import { runStudy } from "../study/runner.ts";
import { type RunContext, runContext } from "./_run.ts";
import { StudyStore } from "../store/db.ts";
import type { RealisationOutcome, ResourceUsage } from "../store/db.ts";
import { type EnsembleResultInput, readEnsembleResults, replaceEnsembleResults } from "../store/ensemble.ts";
import { openStoreReadOnly, readRealisations, readStoredBytes, readStudyPoints } from "../store/reads.ts";
import { type Projection, projectionSizes, projectSpread } from "./projection.ts";
import { formatDuration, slurmMemory, slurmTime } from "./_format.ts";

export interface PilotOptions extends RunContext {
  /** Realisations per point (default: 8, at most the study's count). */
  readonly realisations?: number;
  /** Target relative half-width of the 95 % interval for the recommendation (default 0.1). */
  readonly target?: number;
  /** Cores of this machine (default navigator.hardwareConcurrency). */
  readonly cores?: number;
  /** Bootstrap replicates for the pilot's D (default 1000). */
  readonly replicates?: number;
}

/** One projected result of a point. */
export interface PilotResult extends Projection {
  /** "D", a quantity name of `QUANTITIES`, or "cohort_slope" (the fitted slope when there is no regime). */
  readonly name: string;
  readonly label: string;
  readonly status: "ok" | "no-diffusive-regime" | "not-recorded";
  readonly reason: string | null;
}

/** The pilot at one point. */
export interface PilotPoint {
  readonly index: number;
  readonly label: string;
  readonly pointHash: string;
  /** Pilot realisations done and failed. */
  readonly done: number;
  readonly failed: number;
  /** Realisations of the study at this point still to run after the pilot. */
  readonly remaining: number;
  /** Per pilot realisation: CPU time (s; wall time where CPU time is unknown), wall time (s), peak memory. */
  readonly cpuSeconds: readonly number[];
  readonly wallSeconds: readonly number[];
  readonly peakBytes: readonly number[];
  /** Per pilot realisation: its rows in the database (frame blobs, series, scalars, events; bytes). */
  readonly storedBytes: readonly number[];
  /** Where the costs come from: "measured now", or an earlier pilot's or run's records. */
  readonly costSource: string;
  /** When the costs were measured (ISO time; null when they are stored wall times). */
  readonly measuredAt: string | null;
  readonly results: readonly PilotResult[];
}

/** The whole estimate. */
export interface PilotEstimate {
  readonly studyName: string;
  readonly studyHash: string;
  readonly studyId: number;
  readonly pilotSize: number;
  readonly studyRealisations: number;
  readonly workers: number;
  readonly cores: number;
  readonly target: number;
  readonly points: readonly PilotPoint[];
  readonly totals: {
    readonly remaining: number;
    /** CPU time of the remaining realisations (s). */
    readonly cpuSeconds: number;
    /**
     * Wall time with `workers` workers on this machine (s): the pilot's mean wall time per realisation (measured
     * with the same workers, so under the machine's present load) × realisations / workers.
     */
    readonly wallSeconds: number;
    /** The same on an otherwise idle machine: CPU time / min(workers, cores). */
    readonly idleWallSeconds: number;
    /** Longest pilot realisation (s CPU): the tail of a parallel run, and the Slurm task length. */
    readonly longestSeconds: number;
    readonly databaseBytes: number;
    readonly databaseBytesPerRealisation: number;
    /** How the database growth per realisation was obtained. */
    readonly databaseSource: string;
    /** The pre-flight's estimate from counts, for comparison. */
    readonly preflightBytesPerRealisation: number;
    readonly slurm: {
      readonly tasks: number;
      readonly timeLimit: string;
      readonly memory: string;
      readonly coreHours: number;
    };
  };
  /**
   * The recommended realisation count: for D when the pilot projects it, else for the evaporation count, else
   * the next result with a spread (null when none has one); `all` lists every result's need (largest over
   * the points).
   */
  readonly recommendation: {
    readonly N: number;
    readonly result: string;
    readonly point: string;
    readonly all: readonly { readonly result: string; readonly N: number; readonly point: string }[];
  } | null;
  readonly notes: readonly string[];
}

export type PilotOutcome =
  | { readonly interrupted: false; readonly estimate: PilotEstimate }
  | { readonly interrupted: true; readonly done: number };

/** Size of a database and its write-ahead log, 0 when absent. */
function fileBytes(path: string): number {
  let n = 0;
  for (const p of [path, `${path}-wal`]) {
    try {
      n += statSync(p).size;
    } catch {
      // absent
    }
  }
  return n;
}

function mean(xs: readonly number[]): number {
  return xs.length > 0 ? xs.reduce((a, b) => a + b, 0) / xs.length : Number.NaN;
}

/** Runs the pilot and stores its estimate (see the module comment). */
export async function runPilot(study: NormalizedStudy, opts: PilotOptions): Promise<PilotOutcome> {
  const n = Math.min(opts.realisations ?? 8, study.realisations);
  const target = opts.target ?? 0.1;
  if (!(n >= 2)) throw new RangeError(`a pilot needs at least 2 realisations per point, got ${n}`);
  if (!(target > 0 && target < 10)) {
    throw new RangeError(`the target precision must be in (0, 10), got ${target}`);
  }
  const usage = new Map<string, ResourceUsage>();
  const before = fileBytes(opts.dbPath);
  const report = await runStudy(study, {
    ...runContext(opts),
    skipPreflight: true,
    only: (r: PlannedRealisation) => r.index < n,
    onFinished: (r: PlannedRealisation, o: RealisationOutcome) => {
      if (o.usage) usage.set(r.key, o.usage);
    },
  });
  if (report.interrupted) return { interrupted: true, done: report.completed };
  const growth = fileBytes(opts.dbPath) - before;
  const estimate = estimatePilot(study, opts, {
    n,
    target,
    studyId: report.studyId,
    usage,
    computed: report.completed + report.failed,
    growth,
  });
  const store = StudyStore.open(opts.dbPath, { command: "pilot" });
  try {
    replaceEnsembleResults(store, estimate.studyId, pilotRows(estimate), {
      analyses: ["pilot"],
      whole: true,
    });
  } finally {
    store.close();
  }
  return { interrupted: false, estimate };
}

interface Measured {
  readonly n: number;
  readonly target: number;
  readonly studyId: number;
  readonly usage: ReadonlyMap<string, ResourceUsage>;
  readonly computed: number;
  readonly growth: number;
}

/** Reads the pilot's realisations back and builds the estimate. */
function estimatePilot(study: NormalizedStudy, opts: PilotOptions, m: Measured): PilotEstimate {
  const engine = findEngine(study.engine.id);
  const dimension = engine?.capabilities.dimension ?? 2;
  const cores = opts.cores ?? (navigator.hardwareConcurrency || 1);
  const db = openStoreReadOnly(opts.dbPath);
  const notes: string[] = [];
  let earlier: Map<string, Record<string, unknown>> | null = null;
  try {
    const stored = readStudyPoints(db, m.studyId);
    if (m.usage.size === 0) earlier = earlierCosts(db, m.studyId);
    const points = study.points.map((p): PilotPoint => {
      const rows = readRealisations(db, p.pointHash, { seed: study.seed }).filter((r) =>
        r.index < study.realisations
      );
      const pilot = rows.filter((r) => r.index < m.n);
      const done = pilot.filter((r) => r.status === "done");
      const ids = done.map((r) => r.id);
      const cpu: number[] = [], wall: number[] = [], peak: number[] = [];
      const bytes = readStoredBytes(db, ids);
      for (const r of done) {
        const u = m.usage.get(r.key);
        wall.push(r.wallSeconds ?? Number.NaN);
        cpu.push(u?.cpuSeconds ?? r.wallSeconds ?? Number.NaN);
        peak.push(u?.peakBytes ?? Number.NaN);
      }
      const measured = done.filter((r) => m.usage.has(r.key)).length;
      let costSource = measured === done.length
        ? "measured now"
        : `measured now for ${measured} of ${done.length} (the others, run before, by their stored wall times)`;
      let measuredAt: string | null = new Date().toISOString();
      if (m.usage.size === 0) {
        const e = earlier?.get(p.pointHash);
        if (e && Array.isArray(e.cpuSeconds) && typeof e.measuredAt === "string") {
          measuredAt = e.measuredAt;
          costSource = `the pilot of ${measuredAt}`;
          cpu.splice(0, cpu.length, ...(e.cpuSeconds as number[]));
          peak.splice(0, peak.length, ...((e.peakBytes as number[] | undefined) ?? []));
        } else {
          measuredAt = null;
          costSource = "the stored wall times of these realisations (CPU time and memory not measured)";
        }
      }
      const sizes = projectionSizes(m.n, study.realisations);
      const results: PilotResult[] = [];
      const point = { engineId: study.engine.id, params: p.params, dimension };
      const ev = ids.length >= 2
        ? subsetDiffusion(db, point, ids, {
          seed: `${study.hash}/${p.pointHash}/pilot`,
          replicates: opts.replicates ?? 1000,
        })
        : null;
      results.push(...diffusionResults(ev, ids.length, { sizes, target: m.target }));
      const values = readQuantities(db, ids, quantitiesFor(dimension).map((q) => q.name));
      for (const q of quantitiesFor(dimension)) {
        const s = meanAndSd(values[q.name]);
        if (s.n === 0) {
          results.push({
            ...projectSpread({ n: 0, mean: Number.NaN, sd: Number.NaN }, { sizes, target: m.target }),
            name: q.name,
            label: q.label,
            status: "not-recorded",
            reason: "not recorded by this study's observables",
          });
          continue;
        }
        results.push({
          ...projectSpread(s, { sizes, target: m.target }),
          name: q.name,
          label: q.label,
          status: "ok",
          reason: null,
        });
      }
      const doneAll = rows.filter((r) => r.status === "done").length;
      return {
        index: p.index,
        label: stored[p.index]?.label ?? p.label,
        pointHash: p.pointHash,
        done: done.length,
        failed: pilot.filter((r) => r.status === "failed").length,
        remaining: Math.max(0, study.realisations - doneAll),
        cpuSeconds: cpu,
        wallSeconds: wall,
        peakBytes: peak,
        storedBytes: ids.map((id) => bytes.get(id) ?? Number.NaN),
        costSource,
        measuredAt,
        results,
      };
    });
    const totals = projectTotals(study, points, { ...m, workers: opts.workers, cores }, earlier, notes);
    return {
      studyName: study.name,
      studyHash: study.hash,
      studyId: m.studyId,
      pilotSize: m.n,
      studyRealisations: study.realisations,
      workers: opts.workers,
      cores,
      target: m.target,
      points,
      totals,
      recommendation: recommend(points),
      notes,
    };
  } finally {
    db.close();
  }
}

/** D (when the pilot shows a regime) or why not, plus the cohort's fitted slope when a window exists. */
function diffusionResults(
  ev: DiffusionEvidence | null,
  n: number,
  opts: { readonly sizes: readonly number[]; readonly target: number },
): PilotResult[] {
  const label = "D (fixed cohort; only with a diffusive regime)";
  if (ev === null) {
    return [{
      ...projectSpread({ n, mean: Number.NaN, sd: Number.NaN }, opts),
      name: "D",
      label,
      status: "not-recorded",
      reason: n < 2 ? "fewer than 2 done pilot realisations" : "fewer than 3 stored frames per realisation",
    }];
  }
  const cohort = ev.estimators.cohort;
  const se = cohort?.ci?.standardError ?? null;
  const spread = (D: number) => ({ n, mean: D, sd: se === null ? Number.NaN : se * Math.sqrt(n) });
  if (ev.status === "ok" && cohort) {
    return [{ ...projectSpread(spread(cohort.D), opts), name: "D", label, status: "ok", reason: null }];
  }
  const out: PilotResult[] = [{
    ...projectSpread({ n, mean: Number.NaN, sd: Number.NaN }, opts),
    name: "D",
    label,
    status: "no-diffusive-regime",
    reason: `no diffusive regime in the pilot: ${ev.reasons[0] ?? "the rule fails"}` +
      (n < 20 ? ` (only ${n} realisations: the rule is judged on few)` : ""),
  }];
  if (cohort) {
    out.push({
      ...projectSpread(spread(cohort.D), opts),
      name: "cohort_slope",
      label: "fitted slope MSD/(2d·s) of the fixed cohort over the window (not a D: no diffusive regime)",
      status: "ok",
      reason: null,
    });
  }
  return out;
}

/** Costs recorded by an earlier pilot of this revision, by point hash. */
function earlierCosts(
  db: ReturnType<typeof openStoreReadOnly>,
  studyId: number,
): Map<string, Record<string, unknown>> {
  const out = new Map<string, Record<string, unknown>>();
  for (const r of readEnsembleResults(db, studyId, { analysis: "pilot" })) {
    if (r.name === "cost" && typeof r.detail.measuredAt === "string") out.set(r.pointHash, r.detail);
  }
  return out;
}

function projectTotals(
  study: NormalizedStudy,
  points: readonly PilotPoint[],
  m: Measured & { readonly workers: number; readonly cores: number },
  earlier: Map<string, Record<string, unknown>> | null,
  notes: string[],
): PilotEstimate["totals"] {
  let cpu = 0, wall = 0, remaining = 0, longest = 0, peak = 0;
  for (const p of points) {
    const c = mean(p.cpuSeconds.filter(Number.isFinite));
    const w = mean(p.wallSeconds.filter(Number.isFinite));
    remaining += p.remaining;
    if (Number.isFinite(c)) cpu += c * p.remaining;
    wall += (Number.isFinite(w) ? w : c) * p.remaining;
    for (const x of p.cpuSeconds) if (x > longest) longest = x;
    for (const x of p.peakBytes) if (x > peak) peak = x;
  }
  const parallel = Math.max(1, Math.min(m.workers, m.cores));
  if (m.workers > m.cores) {
    notes.push(`${m.workers} workers on ${m.cores} cores: the projection assumes ${m.cores} run at once`);
  }
  const preflight = estimateStudy(study, { workers: 1, toRun: 1 }).databaseBytes;
  let perReal = preflight;
  let source = "the pre-flight's model (nothing was computed now)";
  if (m.computed > 0 && m.growth > 0) {
    perReal = m.growth / m.computed;
    source = `measured: the file grew by ${formatBytes(m.growth)} for ${m.computed} realisations`;
  } else if (earlier && earlier.size > 0) {
    const e = [...earlier.values()][0];
    if (typeof e.databaseBytesPerRealisation === "number") {
      perReal = e.databaseBytesPerRealisation;
      source = "measured by an earlier pilot";
    }
  }
  // Slurm: one realisation per array task; time limit 3× the longest pilot realisation (≥ 10 min), memory
  // 1.5 × (peak of a realisation + 150 MiB for the process itself).
  const base = 150 * 1024 * 1024;
  return {
    remaining,
    cpuSeconds: cpu,
    wallSeconds: wall / Math.max(1, m.workers),
    idleWallSeconds: cpu / parallel,
    longestSeconds: longest,
    databaseBytes: perReal * remaining,
    databaseBytesPerRealisation: perReal,
    databaseSource: source,
    preflightBytesPerRealisation: preflight,
    slurm: {
      tasks: remaining,
      timeLimit: slurmTime(Math.max(600, 3 * longest)),
      memory: slurmMemory(1.5 * ((Number.isFinite(peak) ? peak : 0) + base)),
      coreHours: cpu / 3600,
    },
  };
}

/** Per result the largest N any point needs; the first of D, evaporation, … that has one is the headline. */
function recommend(points: readonly PilotPoint[]): PilotEstimate["recommendation"] {
  const all: { result: string; N: number; point: string }[] = [];
  const names = [...new Set(points.flatMap((p) => p.results.map((r) => r.name)))];
  for (const name of names) {
    let best: { N: number; point: string } | null = null;
    for (const p of points) {
      const r = p.results.find((x) => x.name === name);
      if (r?.recommended != null && (best === null || r.recommended > best.N)) {
        best = { N: r.recommended, point: p.label };
      }
    }
    if (best) all.push({ result: name, ...best });
  }
  const order = ["D", "evaporated"];
  const head = order.map((n) => all.find((a) => a.result === n)).find((a) => a !== undefined) ?? all[0];
  return head ? { ...head, all } : null;
}

/** The `pilot` rows of `ensemble_results` (see DEVELOPERS.md). */
export function pilotRows(e: PilotEstimate): EnsembleResultInput[] {
  const rows: EnsembleResultInput[] = [];
  for (const p of e.points) {
    rows.push({
      pointHash: p.pointHash,
      analysis: "pilot",
      name: "cost",
      value: mean(p.cpuSeconds.filter(Number.isFinite)),
      detail: {
        definition:
          "CPU seconds per realisation (mean over the pilot); arrays per pilot realisation: CPU and " +
          "wall seconds, peak memory and stored bytes (rows in the database)",
        pilotSize: e.pilotSize,
        done: p.done,
        failed: p.failed,
        remaining: p.remaining,
        cpuSeconds: p.cpuSeconds,
        wallSeconds: p.wallSeconds,
        peakBytes: p.peakBytes,
        storedBytes: p.storedBytes,
        costSource: p.costSource,
        measuredAt: p.measuredAt,
        databaseBytesPerRealisation: e.totals.databaseBytesPerRealisation,
      },
    });
    for (const r of p.results) {
      const atStudy = r.curve.find((c) => c.N === e.studyRealisations)?.halfWidth ?? null;
      rows.push({
        pointHash: p.pointHash,
        analysis: "pilot",
        name: `precision.${r.name}`,
        value: atStudy !== null && Number.isFinite(atStudy) ? atStudy : null,
        detail: {
          definition: `projected half-width of the 95 % interval of ${r.label} at the study's ` +
            `${e.studyRealisations} realisations (t·s/√N from the pilot's spread)`,
          status: r.status,
          reason: r.reason ?? r.note,
          n: r.n,
          mean: r.mean,
          sd: r.sd,
          curve: r.curve,
          target: r.target,
          recommended: r.recommended,
        },
      });
    }
  }
  if (e.points.length > 0) {
    rows.push({
      pointHash: e.points[0].pointHash,
      analysis: "pilot",
      name: "projection",
      value: e.totals.wallSeconds,
      detail: {
        definition:
          "projected wall time (s) of the rest of the study with the given workers on this machine, " +
          "at the load the pilot ran under (totals.idleWallSeconds: on an idle machine)",
        workers: e.workers,
        cores: e.cores,
        pilotSize: e.pilotSize,
        studyRealisations: e.studyRealisations,
        totals: e.totals,
        recommendation: e.recommendation,
        notes: e.notes,
        studyHash: e.studyHash,
      },
    });
  }
  return rows;
}

function fmt(x: number, digits = 3): string {
  if (!Number.isFinite(x)) return "—";
  if (x === 0) return "0";
  const a = Math.abs(x);
  return a >= 1e4 || a < 1e-3 ? x.toExponential(digits - 1) : String(Number(x.toPrecision(digits)));
}

/** The estimate as lines for the terminal. */
export function formatPilot(e: PilotEstimate): string[] {
  const t = e.totals;
  const lines = [
    `pilot of ${e.studyName}: ${e.pilotSize} realisations per point (of ${e.studyRealisations}); they are the ` +
    "study's own first realisations and stay stored",
  ];
  for (const p of e.points) {
    const cpu = p.cpuSeconds.filter(Number.isFinite);
    const peak = p.peakBytes.filter(Number.isFinite);
    lines.push(
      `  point ${p.index} (${p.label}): ${p.done} done${p.failed ? `, ${p.failed} FAILED` : ""}; per ` +
        `realisation CPU ${fmt(mean(cpu))} s (${fmt(Math.min(...cpu))}–${fmt(Math.max(...cpu))})` +
        (peak.length > 0 ? `, peak memory ${formatBytes(Math.max(...peak))}` : "") +
        `, ${formatBytes(mean(p.storedBytes.filter(Number.isFinite)))} of rows` +
        (p.costSource === "measured now" ? "" : ` [costs from ${p.costSource}]`),
    );
    for (const r of p.results) {
      if (r.status !== "ok") {
        if (r.status === "no-diffusive-regime" || r.name === "D") lines.push(`    ${r.name}: ${r.reason}`);
        continue;
      }
      const curve = r.curve.map((c) => `${c.N}: ±${fmt(c.halfWidth, 2)}`).join(", ");
      const rec = r.recommended !== null
        ? `; ±${Math.round(100 * r.target)} % needs N = ${r.recommended}`
        : r.note
        ? ` (${r.note})`
        : "";
      lines.push(
        `    ${r.name} = ${fmt(r.mean)} (sd ${fmt(r.sd, 2)}): 95 % half-width at N = ${curve}${rec}`,
      );
    }
  }
  lines.push(
    `  database: ${formatBytes(t.databaseBytesPerRealisation)} per realisation (${t.databaseSource}; the ` +
      `pre-flight's model says ${formatBytes(t.preflightBytesPerRealisation)}): ${
        formatBytes(t.databaseBytes)
      } more for the ${t.remaining} realisations still to run`,
  );
  lines.push(
    `  this machine: ${formatDuration(t.cpuSeconds)} of CPU for the rest; with ${e.workers} worker${
      e.workers === 1 ? "" : "s"
    } (${e.cores} cores) about ${formatDuration(t.wallSeconds)} at the present load (${
      formatDuration(t.idleWallSeconds)
    } on an idle machine), plus up to ${formatDuration(t.longestSeconds)} for the last realisation`,
  );
  lines.push(
    `  Slurm array: ${t.slurm.tasks} tasks of one realisation, ${fmt(t.slurm.coreHours)} core-hours; ` +
      `ask --time-limit ${t.slurm.timeLimit} --memory ${t.slurm.memory} (3× the longest pilot realisation, ` +
      "1.5× its memory plus the process)",
  );
  if (e.recommendation) {
    lines.push(
      `  recommended: ${e.recommendation.N} realisations per point for ±${
        Math.round(100 * e.target)
      } % on ${e.recommendation.result} (95 %; point ${e.recommendation.point} needs the most)` +
        (e.recommendation.result === "D" ? "" : "; D has no projection (see above)"),
    );
    const others = e.recommendation.all.filter((a) => a.result !== e.recommendation!.result);
    if (others.length > 0) lines.push(`    others: ${others.map((a) => `${a.result} ${a.N}`).join(", ")}`);
  } else lines.push("  recommended: no result has a spread to project from");
  for (const n of e.notes) lines.push(`  note: ${n}`);
  lines.push("  timings come from this machine as loaded now; a shared machine makes them noisy");
  return lines;
}

/** The last pilot estimate stored for the study with this hash, as lines (empty when there is none). */
export function storedPilotLines(dbPath: string, studyHash: string): string[] {
  let db;
  try {
    if (statSync(dbPath).size === 0) return [];
    db = openStoreReadOnly(dbPath);
  } catch {
    return [];
  }
  try {
    const row = db.prepare("SELECT id FROM studies WHERE study_hash = ?").get(studyHash) as
      | { id: number }
      | undefined;
    if (!row) return [];
    const rows = readEnsembleResults(db, Number(row.id), { analysis: "pilot" });
    const proj = rows.find((r) => r.name === "projection");
    if (!proj) return [];
    const t = proj.detail.totals as PilotEstimate["totals"];
    const rec = proj.detail.recommendation as PilotEstimate["recommendation"];
    return [
      `last pilot (${proj.computedAt}, ${String(proj.detail.pilotSize)} per point): rest of the study ≈ ${
        formatDuration(t.wallSeconds)
      } with ${String(proj.detail.workers)} workers, ${
        formatBytes(t.databaseBytes)
      } of database; Slurm: ${t.slurm.tasks} ` +
      `tasks, --time-limit ${t.slurm.timeLimit} --memory ${t.slurm.memory}`,
      rec ? `  recommended ${rec.N} realisations per point (${rec.result})` : "  no recommendation",
    ];
  } finally {
    db.close();
  }
}
