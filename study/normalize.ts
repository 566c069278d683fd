/**
 * Normalizing a validated study: defaults filled, the sweep expanded into parameter points, content hashes
 * computed. The result is plain data (JSON-safe), stored with every run and the input of `planStudy`.
 *
 * Hashes (SHA-256 of canonical JSON, each with its own versioned domain prefix, see `hash.ts`):
 * - `paramsHash` = H("spindrift-params-v1", { engine id, params }): realisation seeds derive from it, so
 *   changing run controls, observables or the engine version keeps the initial conditions.
 * - `pointHash` = H("spindrift-point-v1", { engine id and version, params, run controls except `workers`,
 *   observables, and — for engines that read input files (`Engine.inputFiles`) — `inputs`, the content
 *   fingerprints of those files (`fingerprint.ts`) }): identifies stored results; anything that could change
 *   them changes it. Points of engines without input files hash exactly as before fingerprints existed.
 * - `hash` (the study) = H("spindrift-study-v1", { name, description, engine, realisations, seed, run controls
 *   except `workers`, observables, the set of points as (pointHash, varied) pairs sorted by pointHash }).
 *   It does not depend on the order of keys, of grid paths or of sweep values in the file, on comments, on
 *   `workers`, or on where the file is.
 *
 * @example
 * ```ts
 * const loaded = await loadStudy("film.yaml");
 * if (loaded.ok) {
 *   const study = normalizeStudy(loaded.study, { text: loaded.text, sourcePath: "/abs/film.yaml" });
 *   study.points.map((p) => p.label); // ["initial.count=24", "initial.count=48", …]
 * }
 * ```
 */
import type { ClusterSettings } from "./executors/slurm_schema.ts";
import type { Engine } from "../engines/contract.ts";
import type { ClassificationConfig, ProfileBinning } from "../engines/observables/contract.ts";
import { DEFAULT_PROFILE } from "../engines/observables/mod.ts";
import { ENGINES } from "../engines/registry.ts";
import { dirname, resolve } from "node:path";
import { contentHash } from "./hash.ts";
import { fingerprintFiles } from "./fingerprint.ts";
import { OBSERVABLE_IDS, type StudyFile } from "./schema.ts";
import { applySetting, expandSweep, pointLabel } from "./sweep.ts";

/** One parameter point: the engine parameters of one sweep setting. */
export interface ParameterPoint {
  /** Position in sweep order, from 0. */
  readonly index: number;
  /** "initial.count=64, friction.alpha=0.01", or "base" without a sweep. */
  readonly label: string;
  /** Swept path → value at this point (empty without a sweep). */
  readonly varied: Readonly<Record<string, unknown>>;
  /** Full engine parameters after defaults: the output of the engine's paramsSchema. */
  readonly params: unknown;
  /** Hash of engine id + params (seeds derive from it). */
  readonly paramsHash: string;
  /** Hash of engine id + version + params + run controls (except workers) + observables (identifies results). */
  readonly pointHash: string;
  /** Content fingerprints of the point's input files (path as named → "sha256:…" or "missing"); {} for none. */
  readonly inputs: Readonly<Record<string, string>>;
}

/** Run controls after defaults. */
export interface NormalizedRun {
  readonly duration: number;
  readonly sampleInterval: number;
  readonly tolerance: number;
  readonly maxDistance: number;
  /** The study's default worker count, when it sets one (never part of a hash). */
  readonly workers?: number;
  /** Threads inside one realisation, when set (never part of a hash). */
  readonly threads?: number;
  /** Cluster resources for the Slurm executor, when given (never part of a hash). */
  readonly cluster?: ClusterSettings;
}

/** A study ready to plan and run. */
export interface NormalizedStudy {
  readonly name: string;
  /** The study's description, without leading and trailing white space. */
  readonly description: string;
  readonly engine: { readonly id: string; readonly version: string };
  readonly realisations: number;
  /** Master seed as text (integer seeds in decimal). */
  readonly seed: string;
  readonly run: NormalizedRun;
  readonly observables: {
    /** Observable ids in canonical order (that of `OBSERVABLE_IDS`). */
    readonly record: readonly string[];
    readonly classification: ClassificationConfig;
    /** Radial-profile binning; present only when it differs from the default (so defaults hash alike). */
    readonly profile?: ProfileBinning;
  };
  readonly points: readonly ParameterPoint[];
  /** Content hash of the study (see the module comment). */
  readonly hash: string;
  /** The study file's text, as read. */
  readonly text: string;
  /** Where the study file was read from. */
  readonly sourcePath: string;
}

/** Options of `normalizeStudy`. */
export interface NormalizeOptions {
  /** The study file's text (kept for provenance). */
  readonly text: string;
  /** Where it was read from (kept for provenance; not hashed). */
  readonly sourcePath: string;
  /** Engines to look the study's engine up in (default: every registered engine). */
  // deno-lint-ignore no-explicit-any
  readonly engines?: readonly Engine<any>[];
}

/**
 * Fills defaults, expands the sweep and hashes. Pure: the same study gives the same result.
 *
 * @throws Error when the study did not come from a successful `loadStudy`/`parseStudyText` with the same
 * engines (unknown engine, or parameters the engine's schema refuses): a programming error, not bad input.
 */
export function normalizeStudy(study: StudyFile, opts: NormalizeOptions): NormalizedStudy {
  const engine = (opts.engines ?? ENGINES).find((e) => e.id === study.engine);
  if (!engine) {
    throw new Error(
      `normalizeStudy: engine "${study.engine}" is not registered; load the study with loadStudy first`,
    );
  }
  const run: NormalizedRun = {
    duration: study.run.duration,
    sampleInterval: study.run.sampleInterval,
    tolerance: study.run.tolerance,
    maxDistance: study.run.maxDistance,
    ...(study.run.workers !== undefined ? { workers: study.run.workers } : {}),
    ...(study.run.threads !== undefined ? { threads: study.run.threads } : {}),
    ...(study.run.cluster !== undefined ? { cluster: study.run.cluster } : {}),
  };
  const record = OBSERVABLE_IDS.filter((id) => study.observables.record.includes(id));
  const profile = study.observables.profile;
  const customProfile = profile !== undefined &&
    (profile.bins !== DEFAULT_PROFILE.bins || profile.binFraction !== DEFAULT_PROFILE.binFraction);
  const observables = {
    record,
    classification: { ...study.observables.classification },
    ...(customProfile ? { profile: { bins: profile.bins, binFraction: profile.binFraction } } : {}),
  };
  const engineRef = { id: engine.id, version: engine.version };

  const points: ParameterPoint[] = expandSweep(study.sweep).map((setting, index) => {
    const parsed = engine.paramsSchema.safeParse(applySetting(study.parameters, setting.varied));
    if (!parsed.success) {
      throw new Error(
        `normalizeStudy: point ${index} (${pointLabel(setting.varied)}) fails the ${engine.id} parameter ` +
          `schema; load the study with loadStudy first (${parsed.error.issues[0]?.message ?? "invalid"})`,
      );
    }
    const params = parsed.data;
    const files = engine.inputFiles?.(params, study.realisations) ?? [];
    const inputs = files.length > 0 ? fingerprintFiles(files, dirname(resolve(opts.sourcePath))) : {};
    return {
      index,
      label: pointLabel(setting.varied),
      varied: setting.varied,
      params,
      ...pointIdentity({
        engine: engineRef,
        params,
        run,
        observables,
        inputs: files.length > 0 ? inputs : null,
      }),
      inputs,
    };
  });

  const seed = typeof study.seed === "number" ? String(study.seed) : study.seed;
  const description = study.description.trim();
  const hashed = {
    name: study.name,
    description,
    engine: engineRef,
    realisations: study.realisations,
    seed,
    run,
    observables,
    points,
  };
  return { ...hashed, hash: studyHash(hashed), text: opts.text, sourcePath: opts.sourcePath };
}

/**
 * `paramsHash` and `pointHash` of a parameter point (see the module comment); `inputs` only for engines that
 * read files. Also used for the refined copies of points a numerical audit runs.
 */
export function pointIdentity(p: {
  readonly engine: { readonly id: string; readonly version: string };
  readonly params: unknown;
  readonly run: NormalizedRun;
  readonly observables: NormalizedStudy["observables"];
  readonly inputs: Readonly<Record<string, string>> | null;
}): { paramsHash: string; pointHash: string } {
  return {
    paramsHash: contentHash("spindrift-params-v1", { engine: p.engine.id, params: p.params }),
    pointHash: contentHash("spindrift-point-v1", {
      engine: p.engine,
      params: p.params,
      run: {
        duration: p.run.duration,
        sampleInterval: p.run.sampleInterval,
        tolerance: p.run.tolerance,
        maxDistance: p.run.maxDistance,
      },
      observables: p.observables,
      ...(p.inputs !== null ? { inputs: p.inputs } : {}),
    }),
  };
}

/** The study's content hash (see the module comment) from its normalized fields. */
export function studyHash(s: Omit<NormalizedStudy, "hash" | "text" | "sourcePath">): string {
  return contentHash("spindrift-study-v1", {
    name: s.name,
    description: s.description,
    engine: s.engine,
    realisations: s.realisations,
    seed: s.seed,
    run: {
      duration: s.run.duration,
      sampleInterval: s.run.sampleInterval,
      tolerance: s.run.tolerance,
      maxDistance: s.run.maxDistance,
    },
    observables: s.observables,
    points: s.points
      .map((p) => ({ pointHash: p.pointHash, varied: p.varied }))
      .sort((a, b) => (a.pointHash < b.pointHash ? -1 : a.pointHash > b.pointHash ? 1 : 0)),
  });
}

/**
 * The same study with `realisations` per point (a new revision with its own hash; point hashes, seeds and
 * realisation keys are unchanged, so the first realisations are shared): what `run --until` records when it
 * extends a study.
 */
export function withRealisations(study: NormalizedStudy, realisations: number): NormalizedStudy {
  const { hash: _hash, ...rest } = study;
  const next = { ...rest, realisations };
  return { ...next, hash: studyHash(next) };
}
