/**
 * Pre-flight: what a study will cost before anything runs — frames per realisation, realisations, database
 * growth and memory — against the free disk space and the available memory. `check` prints it; `run` refuses
 * past the hard limits (with the numbers and the fix; `--force` overrides) and warns past the soft ones.
 * Everything is computed from counts: the plan (one object per realisation) is never built for it, so a study
 * of 10⁹ realisations is refused in milliseconds instead of exhausting the memory.
 *
 * Model (calibrated on the film-patch demo database: 128 realisations, 15 488 frames, 1.04 million series rows;
 * frames took 2532 B per row on disk for 1813 B of data, series 36.8 B per row; common practice, no source):
 * - frames per realisation F = ⌊duration / sampleInterval⌋ + 1;
 * - objects per frame n from the engine's `sizeHint` (the largest over the points; unknown for imported data);
 * - frame bytes on disk = 1.25 × n × (bytes per object of the frame layout) + 300;
 * - series rows per realisation = F × (series names: the observables' series with `profile.<k>` counted once per
 *   bin, plus the engine's diagnostics), 37 B each on disk;
 * - memory per worker: 64 MiB base + engine state (200 B per object, at the larger of n and the point cap, plus
 *   the engine's own `stateBytes`, e.g. a condensate's grid) +
 *   frame batches in flight (5 × max(4 MiB, one frame)) + the series held until the end (24 B per value, t and
 *   value for every series and frame);
 * - memory of the main thread: 128 MiB base + 500 B per planned realisation (measured 374 B for the plan itself,
 *   plus the resume map).
 *
 * Limits: hard — the database growth exceeds the free disk space, or the memory the available memory, or the
 * frame count is not finite; soft — the growth exceeds a quarter of the free space or 100 GiB, the memory half
 * of the available memory, or the study plans more than a million realisations, or the engine warns (e.g.
 * O(N²) work at large N).
 *
 * @example
 * ```ts
 * const e = estimateStudy(study, { workers: 2, toRun: 100 });
 * const v = judgeEstimate(e, probeResources("runs"));
 * if (v.refusals.length > 0 && !force) throw new PreflightRefused(v);
 * ```
 */
import { statfsSync } from "node:fs";
import { dirname, resolve } from "node:path";
import type { EngineCapabilities } from "../engines/contract.ts";
import { applicableObservables, DEFAULT_PROFILE } from "../engines/observables/mod.ts";
import { findEngine } from "../engines/registry.ts";
import type { NormalizedStudy } from "./normalize.ts";
import { openStoreReadOnly } from "../store/reads.ts";
import { countDone } from "../store/status.ts";

/** What a study is estimated to need. */
export interface StudyEstimate {
  readonly points: number;
  readonly realisationsPerPoint: number;
  /** All realisations of the study. */
  readonly total: number;
  /** Realisations still to compute (total minus those stored). */
  readonly toRun: number;
  readonly framesPerRealisation: number;
  /** Largest objects per frame over the points; null when the engine cannot tell (imported data). */
  readonly objectsPerFrame: number | null;
  /** Largest objects per frame the engine allows them to grow to. */
  readonly maxObjectsPerFrame: number | null;
  readonly seriesPerFrame: number;
  /** Database growth for `toRun` realisations (bytes); frames left out when the object count is unknown. */
  readonly databaseBytes: number;
  /** Peak memory of the run: main thread plus `workers` workers (bytes). */
  readonly memoryBytes: number;
  /** The part of `memoryBytes` that holds the plan of every realisation. */
  readonly planBytes: number;
  readonly workers: number;
  /** The engine's warnings about cost (deduplicated). */
  readonly engineNotes: readonly string[];
}

/** Free disk space and available memory, where they could be read (null otherwise). */
export interface Resources {
  readonly freeDiskBytes: number | null;
  readonly availableMemoryBytes: number | null;
  /** Why a resource is unknown. */
  readonly unknown: readonly string[];
}

export interface PreflightVerdict {
  /** One line each, with the numbers and what to do: `run` stops unless forced. */
  readonly refusals: readonly string[];
  readonly warnings: readonly string[];
  /** The estimate in words, for `check`. */
  readonly lines: readonly string[];
}

/** A run refused by the pre-flight; `--force` runs it anyway. */
export class PreflightRefused extends Error {
  readonly verdict: PreflightVerdict;
  constructor(verdict: PreflightVerdict) {
    super(`the study was not started:\n${verdict.refusals.map((r) => `  ${r}`).join("\n")}`);
    this.name = "PreflightRefused";
    this.verdict = verdict;
  }
}

const MiB = 1024 * 1024;
const GiB = 1024 * MiB;
const BYTES = { id: 4, x: 8, y: 8, z: 8, circulation: 8, loop: 4, marker: 1, label: 1 } as const;

/** Bytes per object of an engine's frame layout (see store/frame_codec.ts and execute.ts `frameColumns`). */
function bytesPerObject(c: EngineCapabilities): number {
  let b = BYTES.id + BYTES.x + BYTES.y + BYTES.label + (c.dimension === 3 ? BYTES.z : 0);
  for (const f of c.fields) b += BYTES[f];
  return b;
}

/** Series names a realisation stores per frame. */
function seriesPerFrame(study: NormalizedStudy, c: EngineCapabilities): number {
  const { use } = applicableObservables(study.observables.record, c);
  const bins = study.observables.profile?.bins ?? DEFAULT_PROFILE.bins;
  let n = Object.keys(c.diagnostics).length;
  for (const o of use) {
    for (const name of Object.keys(o.produces)) n += name.includes("<k>") ? bins : 1;
  }
  return n;
}

/** Frames each realisation stores. */
export function framesPerRealisation(study: NormalizedStudy): number {
  return Math.floor((study.run.duration / study.run.sampleInterval) * (1 + 1e-12)) + 1;
}

/**
 * Estimates the cost of running `toRun` realisations of `study` on `workers` workers (see the module comment).
 * @throws Error when the study's engine is not registered (load the study with loadStudy first).
 */
export function estimateStudy(
  study: NormalizedStudy,
  opts: { readonly workers: number; readonly toRun?: number },
): StudyEstimate {
  const engine = findEngine(study.engine.id);
  if (!engine) throw new Error(`engine ${study.engine.id} is not registered`);
  const c = engine.capabilities;
  const controls = {
    duration: study.run.duration,
    sampleInterval: study.run.sampleInterval,
    tolerance: study.run.tolerance,
    maxDistance: study.run.maxDistance,
  };
  let objects: number | null = 0;
  let maxObjects = 0;
  let stateBytes = 0;
  const notes = new Set<string>();
  for (const p of study.points) {
    const hint = engine.sizeHint?.(p.params as never, controls);
    if (hint === undefined) {
      objects = null;
      continue;
    }
    if (objects !== null) objects = Math.max(objects, hint.objects);
    maxObjects = Math.max(maxObjects, hint.maxObjects ?? hint.objects);
    stateBytes = Math.max(stateBytes, hint.stateBytes ?? 0);
    for (const n of hint.notes ?? []) notes.add(n);
  }
  const total = study.points.length * study.realisations;
  const toRun = Math.min(total, opts.toRun ?? total);
  const frames = framesPerRealisation(study);
  const series = seriesPerFrame(study, c);
  const frameBytes = objects === null ? 0 : 1.25 * objects * bytesPerObject(c) + 300;
  const databaseBytes = toRun * frames * (frameBytes + 37 * series) + toRun * 2048;
  const stateObjects = Math.max(objects ?? 0, maxObjects);
  const oneFrame = stateObjects * bytesPerObject(c);
  const perWorker = 64 * MiB + 200 * stateObjects + stateBytes + 5 * Math.max(4 * MiB, oneFrame) +
    24 * 2 * series * frames;
  const workers = Math.max(1, Math.min(opts.workers, toRun));
  const planBytes = 500 * total;
  const memoryBytes = 128 * MiB + planBytes + (toRun > 0 ? workers * perWorker : 0);
  return {
    points: study.points.length,
    realisationsPerPoint: study.realisations,
    total,
    toRun,
    framesPerRealisation: frames,
    objectsPerFrame: objects,
    maxObjectsPerFrame: objects === null ? null : maxObjects,
    seriesPerFrame: series,
    databaseBytes,
    memoryBytes,
    planBytes,
    workers,
    engineNotes: [...notes],
  };
}

/**
 * Free space of the file system holding `folder` and the memory available now. Needs `--allow-sys=statfs` and
 * `--allow-sys=systemMemoryInfo`; without them (or on a system that cannot say) the value is null and the
 * pre-flight says it could not check.
 */
export function probeResources(folder: string): Resources {
  const unknown: string[] = [];
  let freeDiskBytes: number | null = null;
  let availableMemoryBytes: number | null = null;
  try {
    const s = statfsSync(resolve(folder));
    freeDiskBytes = Number(s.bavail) * Number(s.bsize);
  } catch (e) {
    unknown.push(`free disk space (${(e as Error).message})`);
  }
  try {
    availableMemoryBytes = Deno.systemMemoryInfo().available;
  } catch (e) {
    unknown.push(`available memory (${(e as Error).message})`);
  }
  return { freeDiskBytes, availableMemoryBytes, unknown };
}

/** "1.2 GiB", "830 MiB", "12 KiB". */
export function formatBytes(b: number): string {
  if (!Number.isFinite(b)) return "unbounded";
  if (b >= 1024 * GiB * 1024) return `${(b / (1024 * 1024 * GiB)).toPrecision(3)} PiB`;
  if (b >= 1024 * GiB) return `${(b / (1024 * GiB)).toPrecision(3)} TiB`;
  if (b >= GiB) return `${(b / GiB).toPrecision(3)} GiB`;
  if (b >= MiB) return `${(b / MiB).toPrecision(3)} MiB`;
  return `${Math.ceil(b / 1024)} KiB`;
}

function count(n: number): string {
  if (!Number.isFinite(n)) return "unboundedly many";
  return n >= 1e6 ? n.toExponential(2) : String(n);
}

/** Refusals, warnings and the estimate in words (see the module comment for the limits). */
export function judgeEstimate(e: StudyEstimate, r: Resources): PreflightVerdict {
  const refusals: string[] = [];
  const warnings: string[] = [];
  const frames = `${count(e.framesPerRealisation)} frames per realisation`;
  const objects = e.objectsPerFrame === null
    ? "objects per frame unknown in advance (frames not counted in the size)"
    : `${count(e.objectsPerFrame)} objects per frame` +
      (e.maxObjectsPerFrame !== null && e.maxObjectsPerFrame > e.objectsPerFrame
        ? ` (up to ${count(e.maxObjectsPerFrame)})`
        : "");
  const lines = [
    `size: ${e.points} point${e.points === 1 ? "" : "s"} × ${e.realisationsPerPoint} = ${
      count(e.total)
    } realisations` +
    (e.toRun < e.total ? ` (${count(e.toRun)} still to run)` : "") + `; ${frames}; ${objects}; ` +
    `${e.seriesPerFrame} series`,
    `estimated: database grows by ${formatBytes(e.databaseBytes)}` +
    (r.freeDiskBytes !== null ? ` (free: ${formatBytes(r.freeDiskBytes)})` : "") +
    `; memory ${formatBytes(e.memoryBytes)} with ${e.workers} worker${e.workers === 1 ? "" : "s"}` +
    (r.availableMemoryBytes !== null ? ` (available: ${formatBytes(r.availableMemoryBytes)})` : ""),
  ];
  if (r.unknown.length > 0) lines.push(`not checked: ${r.unknown.join("; ")}`);
  if (!Number.isSafeInteger(e.framesPerRealisation)) {
    // Sizes and memory are then unbounded too: this one refusal says it all.
    refusals.push(
      `each realisation would store ${
        count(e.framesPerRealisation)
      } frames (run.duration / run.sampleInterval): ` +
        "shorten run.duration or lengthen run.sampleInterval",
    );
    return { refusals, warnings, lines };
  }
  if (r.freeDiskBytes !== null && e.databaseBytes > r.freeDiskBytes) {
    refusals.push(
      `the database would grow by about ${formatBytes(e.databaseBytes)}, more than the ${
        formatBytes(r.freeDiskBytes)
      } free on its disk: run fewer realisations or frames (run.sampleInterval), or put the database on a ` +
        "larger disk (--db)",
    );
  } else if (
    e.databaseBytes > 100 * GiB || (r.freeDiskBytes !== null && e.databaseBytes > r.freeDiskBytes / 4)
  ) {
    warnings.push(
      `the database will grow by about ${formatBytes(e.databaseBytes)}` +
        (r.freeDiskBytes !== null ? ` of the ${formatBytes(r.freeDiskBytes)} free on its disk` : ""),
    );
  }
  if (r.availableMemoryBytes !== null && e.memoryBytes > r.availableMemoryBytes) {
    const planning = e.planBytes > e.memoryBytes / 2;
    refusals.push(
      `the run would need about ${formatBytes(e.memoryBytes)} of memory` +
        (planning ? ` (${formatBytes(e.planBytes)} of it to plan ${count(e.total)} realisations)` : "") +
        `, more than the ${formatBytes(r.availableMemoryBytes)} available: ` +
        (planning
          ? "run fewer realisations or parameter points"
          : "use fewer workers (--workers), or store fewer frames (run.sampleInterval) or series"),
    );
  } else if (r.availableMemoryBytes !== null && e.memoryBytes > r.availableMemoryBytes / 2) {
    warnings.push(
      `the run will use about ${formatBytes(e.memoryBytes)} of the ${
        formatBytes(r.availableMemoryBytes)
      } of ` +
        "memory available",
    );
  }
  if (e.total > 1e6) {
    warnings.push(
      `${count(e.total)} realisations: planning alone takes about ${Math.ceil(e.total * 8e-6)} s`,
    );
  }
  for (const n of e.engineNotes) warnings.push(n);
  return { refusals, warnings, lines };
}

/**
 * Realisations of `study` already stored done in the database at `dbPath`: 0 when there is none yet, or when it
 * cannot be read (opening it for the run then says why).
 */
function storedDone(study: NormalizedStudy, dbPath: string): number {
  let db;
  try {
    if (Deno.statSync(dbPath).size === 0) return 0;
    db = openStoreReadOnly(dbPath);
  } catch {
    return 0;
  }
  try {
    return countDone(db, study.points.map((p) => p.pointHash), {
      seed: study.seed,
      realisations: study.realisations,
    });
  } finally {
    db.close();
  }
}

/**
 * The pre-flight of a run into `dbPath` with `workers` workers: estimate, resources of the database's disk, and
 * the verdict. Throws `PreflightRefused` past a hard limit unless `force`; the caller shows the warnings.
 * Reads the database (if any) only to count what is stored.
 */
export function preflight(
  study: NormalizedStudy,
  opts: { readonly dbPath: string; readonly workers: number; readonly force?: boolean },
): PreflightVerdict {
  const toRun = study.points.length * study.realisations - storedDone(study, opts.dbPath);
  const verdict = judgeEstimate(
    estimateStudy(study, { workers: opts.workers, toRun }),
    probeResources(dirname(resolve(opts.dbPath))),
  );
  if (verdict.refusals.length > 0 && !opts.force) throw new PreflightRefused(verdict);
  return verdict;
}
