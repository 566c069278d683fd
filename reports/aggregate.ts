/**
 * Ensemble aggregates of one study revision, computed from the database alone: per parameter point and per
 * series name, at every frame index k, the number of realisations n, mean, standard deviation and Student-t
 * confidence interval across the realisations with status `done`; per realisation the invariant drifts
 * (scalars named `drift.*`); the failed and unfinished realisations; evaporated counts; event counts; and a
 * mean with interval for every scalar.
 *
 * Which realisations count: those of the point's stored rows whose index is below the study's planned
 * `realisations` (rows with a higher index, left by an earlier revision with more realisations, are counted
 * in `extra` but not used). Failed and running rows never enter the statistics. Missing values (a NULL or
 * absent row) are skipped, so n can vary with k.
 *
 * Method: Welford's one-pass mean/variance per k and the Student-t interval of `intervals.ts`.
 *
 * References: B.P. Welford, Technometrics 4, 419 (1962), doi:10.1080/00401706.1962.10490022.
 *
 * @example
 * ```ts
 * const db = openStoreReadOnly("film-patch.sqlite");
 * const agg = aggregateStudy(db);
 * const msd = agg.points[0].series.get("msd"); // msd.mean[j], msd.lower[j], msd.upper[j] at time msd.t[j]
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import {
  type AlignedSeries,
  type PointRecord,
  readAlignedSeries,
  readEventCounts,
  readRealisations,
  readScalars,
  readSeriesNames,
  readStudy,
  readStudyPoints,
  type RealisationRecord,
  type StudyRecord,
} from "../store/reads.ts";
import { intervalFromMoments, type MeanInterval, meanInterval, Welford } from "./intervals.ts";

/** Per-frame ensemble statistics of one series at one point. NaN where undefined (e.g. no interval at n < 2). */
export interface SeriesBand {
  readonly name: string;
  readonly k: Int32Array;
  readonly t: Float64Array;
  readonly n: Int32Array;
  readonly mean: Float64Array;
  readonly sd: Float64Array;
  readonly lower: Float64Array;
  readonly upper: Float64Array;
  /** Largest disagreement between realisations on the time of one frame index (0 normally). */
  readonly tSpread: number;
}

/** How the point's realisations stand. `planned`/`missing` are null when the study does not say. */
export interface RealisationCounts {
  readonly planned: number | null;
  readonly done: number;
  readonly failed: number;
  /** Rows still `running`: a run in progress, or one a crash interrupted. */
  readonly running: number;
  /** Planned indices with no row at all (not run yet). */
  readonly missing: number | null;
  /** Stored rows beyond the planned count (from an earlier revision); not used. */
  readonly extra: number;
}

/** One relative invariant drift of one realisation. */
export interface DriftValue {
  readonly realisationId: number;
  readonly index: number;
  /** Scalar name without the `drift.` prefix, e.g. "hamiltonian". */
  readonly invariant: string;
  readonly value: number;
}

/** A failed or unfinished realisation, for the report's failure table. */
export interface FailureRow {
  readonly pointIndex: number;
  readonly pointLabel: string;
  readonly realisationId: number;
  readonly index: number;
  readonly status: "failed" | "running";
  readonly kind: string | null;
  readonly error: string | null;
  readonly seed: string;
  readonly simTimeReached: number | null;
  readonly wallSeconds: number | null;
  readonly startedAt: string | null;
  readonly finishedAt: string | null;
  readonly host: string | null;
}

/** Final evaporated count per done realisation and its ensemble mean. */
export interface EvaporatedSummary {
  /** "scalar" when read from `evaporated_final`, "series" when taken as the last `evaporated_count` value. */
  readonly source: "scalar" | "series" | "none";
  readonly perRealisation: readonly { readonly index: number; readonly value: number }[];
  readonly interval: MeanInterval;
}

export interface PointAggregate {
  readonly point: PointRecord;
  /** The realisations considered (index below the planned count), by index. */
  readonly realisations: readonly RealisationRecord[];
  readonly counts: RealisationCounts;
  /** Per series name (sorted), statistics across done realisations. */
  readonly series: ReadonlyMap<string, SeriesBand>;
  /** Per scalar name (sorted), mean and interval across done realisations. */
  readonly scalars: ReadonlyMap<string, MeanInterval>;
  readonly drifts: readonly DriftValue[];
  readonly evaporated: EvaporatedSummary;
  /** Total number of events of each kind over the done realisations. */
  readonly events: Readonly<Record<string, number>>;
  readonly failures: readonly FailureRow[];
}

/** What the report shows of the normalized study, read defensively (fields may be absent in old files). */
export interface StudyOverview {
  readonly realisations: number | null;
  readonly seed: string | null;
  /** Run controls (duration, sampleInterval, tolerance, …). */
  readonly run: Readonly<Record<string, unknown>> | null;
  /** Observable settings (record list, classification thresholds). */
  readonly observables: Readonly<Record<string, unknown>> | null;
}

export interface StudyAggregate {
  readonly study: StudyRecord;
  readonly overview: StudyOverview;
  readonly level: number;
  readonly points: readonly PointAggregate[];
  /** All failed and unfinished realisations of the study, point by point. */
  readonly failures: readonly FailureRow[];
}

/**
 * Statistics at every frame index of an aligned series: n, mean, sd and the `level` interval over the
 * finite values at that index.
 *
 * @example
 * ```ts
 * const band = seriesBand(readAlignedSeries(db, doneIds, "msd"));
 * ```
 */
export function seriesBand(aligned: AlignedSeries, level = 0.95): SeriesBand {
  const m = aligned.k.length;
  const n = new Int32Array(m);
  const mean = new Float64Array(m);
  const sd = new Float64Array(m);
  const lower = new Float64Array(m);
  const upper = new Float64Array(m);
  const w = new Welford();
  for (let j = 0; j < m; j++) {
    w.reset();
    for (const row of aligned.values) if (Number.isFinite(row[j])) w.push(row[j]);
    const ci = intervalFromMoments(w.n, w.mean, w.sd, level);
    n[j] = ci.n;
    mean[j] = ci.mean;
    sd[j] = ci.sd;
    lower[j] = ci.lower ?? Number.NaN;
    upper[j] = ci.upper ?? Number.NaN;
  }
  return {
    name: aligned.name,
    k: aligned.k,
    t: aligned.t,
    n,
    mean,
    sd,
    lower,
    upper,
    tSpread: aligned.tSpread,
  };
}

/** Reads the fields the report shows from a stored normalized study. */
export function studyOverview(normalized: unknown): StudyOverview {
  const rec = isRecord(normalized) ? normalized : {};
  const realisations = typeof rec.realisations === "number" && Number.isInteger(rec.realisations)
    ? rec.realisations
    : null;
  const seed = typeof rec.seed === "string" || typeof rec.seed === "number" ? String(rec.seed) : null;
  return {
    realisations,
    seed,
    run: isRecord(rec.run) ? rec.run : null,
    observables: isRecord(rec.observables) ? rec.observables : null,
  };
}

/**
 * Aggregates one point: its realisations (under the study's master seed `seed`, index below `planned` when
 * given), series bands, scalars, drifts, evaporated counts, events and failures.
 */
export function aggregatePoint(
  db: DatabaseSync,
  point: PointRecord,
  opts: { seed: string | null; planned?: number | null; level?: number; series?: readonly string[] },
): PointAggregate {
  const level = opts.level ?? 0.95;
  const planned = opts.planned ?? null;
  const stored = readRealisations(db, point.pointHash, { seed: opts.seed });
  const realisations = planned === null ? stored : stored.filter((r) => r.index < planned);
  const done = realisations.filter((r) => r.status === "done");
  const doneIds = done.map((r) => r.id);
  const counts: RealisationCounts = {
    planned,
    done: done.length,
    failed: realisations.filter((r) => r.status === "failed").length,
    running: realisations.filter((r) => r.status === "running").length,
    missing: planned === null ? null : planned - realisations.length,
    extra: stored.length - realisations.length,
  };

  const series = new Map<string, SeriesBand>();
  const wanted = opts.series === undefined ? null : new Set(opts.series);
  for (const name of readSeriesNames(db, doneIds)) {
    if (wanted !== null && !wanted.has(name)) continue;
    series.set(name, seriesBand(readAlignedSeries(db, doneIds, name), level));
  }

  const scalarRows = readScalars(db, doneIds);
  const scalarNames = [...new Set(done.flatMap((r) => Object.keys(scalarRows.get(r.id)!)))].sort();
  const scalars = new Map<string, MeanInterval>();
  for (const name of scalarNames) {
    scalars.set(name, meanInterval(done.map((r) => scalarRows.get(r.id)![name] ?? Number.NaN), { level }));
  }

  const drifts: DriftValue[] = [];
  for (const r of done) {
    for (const [name, value] of Object.entries(scalarRows.get(r.id)!)) {
      if (name.startsWith("drift.")) {
        drifts.push({ realisationId: r.id, index: r.index, invariant: name.slice(6), value });
      }
    }
  }
  drifts.sort((a, b) => a.invariant.localeCompare(b.invariant) || a.index - b.index);

  const evaporated = evaporatedSummary(db, done, scalarRows, level);

  const events: Record<string, number> = {};
  for (const perRun of readEventCounts(db, doneIds).values()) {
    for (const [kind, count] of Object.entries(perRun)) events[kind] = (events[kind] ?? 0) + count;
  }

  const failures: FailureRow[] = realisations.filter((r) => r.status !== "done").map((r) => ({
    pointIndex: point.index,
    pointLabel: point.label,
    realisationId: r.id,
    index: r.index,
    status: r.status as "failed" | "running",
    kind: r.failureKind,
    error: r.error,
    seed: r.seed,
    simTimeReached: r.simTimeReached,
    wallSeconds: r.wallSeconds,
    startedAt: r.startedAt,
    finishedAt: r.finishedAt,
    host: r.host,
  }));

  return { point, realisations, counts, series, scalars, drifts, evaporated, events, failures };
}

/**
 * Aggregates a study revision (the latest, or `opts.studyId`) point by point; `opts.series` limits the series
 * bands to those names (default: every stored series).
 *
 * @example
 * ```ts
 * const agg = aggregateStudy(openStoreReadOnly("film-patch.sqlite"), { studyId: 2 });
 * ```
 */
export function aggregateStudy(
  db: DatabaseSync,
  opts: { studyId?: number; level?: number; series?: readonly string[] } = {},
): StudyAggregate {
  const level = opts.level ?? 0.95;
  const study = readStudy(db, { studyId: opts.studyId });
  const overview = studyOverview(study.normalized);
  const points = readStudyPoints(db, study.id).map((p) =>
    aggregatePoint(db, p, { seed: study.seed, planned: overview.realisations, level, series: opts.series })
  );
  return { study, overview, level, points, failures: points.flatMap((p) => p.failures) };
}

function evaporatedSummary(
  db: DatabaseSync,
  done: readonly RealisationRecord[],
  scalarRows: Map<number, Record<string, number>>,
  level: number,
): EvaporatedSummary {
  if (done.length > 0 && done.every((r) => "evaporated_final" in scalarRows.get(r.id)!)) {
    const perRealisation = done.map((r) => ({
      index: r.index,
      value: scalarRows.get(r.id)!.evaporated_final,
    }));
    return {
      source: "scalar",
      perRealisation,
      interval: meanInterval(perRealisation.map((p) => p.value), { level }),
    };
  }
  const aligned = readAlignedSeries(db, done.map((r) => r.id), "evaporated_count");
  if (aligned.k.length === 0) {
    return { source: "none", perRealisation: [], interval: meanInterval([], { level }) };
  }
  const perRealisation = done.map((r, i) => ({ index: r.index, value: lastFinite(aligned.values[i]) }));
  return {
    source: "series",
    perRealisation,
    interval: meanInterval(perRealisation.map((p) => p.value), { level }),
  };
}

function lastFinite(row: Float64Array): number {
  for (let j = row.length - 1; j >= 0; j--) if (Number.isFinite(row[j])) return row[j];
  return Number.NaN;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}
