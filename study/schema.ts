/**
 * The study file format: a zod 4 schema, the single source of truth. Types are inferred from it, the loader
 * validates against it, and the JSON Schema for editors (`study/schema.json`) is generated from it
 * (`deno task schema`).
 *
 * A study file is one YAML map:
 *
 * ```yaml
 * name: film-patch               # letters, digits, - and _ (default database and report file names)
 * description: What does the cloud do when …?
 * engine: point-vortex-2d        # an engine id (engines/registry.ts)
 * parameters: { … }              # the engine's own parameters (its paramsSchema)
 * sweep:                         # optional: vary parameters (dotted paths inside `parameters`)
 *   grid: { initial.count: [24, 48, 96] }            # cartesian product, first key varies slowest
 *   zip: [ { friction.alpha: [0, 0.1], friction.alphaPrime: [0, 0.01] } ]   # lists varied together
 * realisations: 8                # independent realisations per parameter point
 * seed: 20261201                 # master seed (integer or text)
 * run: { duration: 40, sampleInterval: 0.5, tolerance: 1.0e-9, maxDistance: 1.0e6, workers: 2 }
 * observables: { record: [cluster, evaporation, msd], classification: { separationFactor: 0.3, … } }
 * ```
 *
 * The full schema is a discriminated union on `engine`: each engine's member carries that engine's
 * `paramsSchema` under `parameters`, so editors complete and check engine parameters too. Rules that tie
 * several fields together (sample interval ≤ duration, zip lists of equal length, a path swept only once)
 * are refinements here; the loader (`study/load.ts`) also applies them when other fields of the same section
 * are wrong, so that every problem is reported at once.
 *
 * @example
 * ```ts
 * import { studySchema } from "./schema.ts";
 * const result = studySchema.safeParse(yamlValue);
 * ```
 */
import { clusterSchema } from "./executors/slurm_schema.ts";
import { z } from "zod";
import type { Engine } from "../engines/contract.ts";
import { ENGINES } from "../engines/registry.ts";
import { DEFAULT_CLASSIFICATION, DEFAULT_PROFILE, observableIds } from "../engines/observables/mod.ts";

/** Relative tolerance used when `run.tolerance` is left out. */
export const DEFAULT_TOLERANCE = 1e-9;
/** Blow-up guard used when `run.maxDistance` is left out (engine length unit). */
export const DEFAULT_MAX_DISTANCE = 1e6;
/** Most parameter points one study may expand to (a guard against a mistyped sweep). */
export const MAX_POINTS = 10_000;
/** Most realisations per parameter point. */
export const MAX_REALISATIONS = 1_000_000;

/** Observable ids a study may record, in their canonical order. */
export const OBSERVABLE_IDS: readonly string[] = observableIds();

/** A cross-field rule violation, found on a value that may be partly invalid. */
export interface RuleViolation {
  /** Path relative to the checked section. */
  readonly path: readonly (string | number)[];
  readonly message: string;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

const finiteNumber = (v: unknown): v is number => typeof v === "number" && Number.isFinite(v);

/** Cross-field rules of the `run` section: the sample interval must not exceed the duration. */
export function runRules(run: unknown): RuleViolation[] {
  if (!isRecord(run)) return [];
  const { duration, sampleInterval } = run;
  if (finiteNumber(duration) && finiteNumber(sampleInterval) && duration > 0 && sampleInterval > duration) {
    return [{
      path: ["sampleInterval"],
      message: `must be ≤ run.duration (${duration}): at least one stored frame after the start is needed`,
    }];
  }
  return [];
}

/** Splits a dotted sweep path ("initial.count") into parameter keys. */
export function splitSweepPath(path: string): string[] {
  return path.split(".");
}

/** Where a swept path is listed in the file: `sweep.grid.<path>` or `sweep.zip[g].<path>`. */
export interface SweepPathSite {
  readonly path: string;
  /** Location of the path's key, relative to the `sweep` section. */
  readonly at: readonly (string | number)[];
}

/** Every swept path with the place it is listed, in file order: grid keys first, then zip groups. */
export function sweepPathSites(sweep: unknown): SweepPathSite[] {
  const sites: SweepPathSite[] = [];
  if (!isRecord(sweep)) return sites;
  if (isRecord(sweep.grid)) {
    for (const p of Object.keys(sweep.grid)) sites.push({ path: p, at: ["grid", p] });
  }
  if (Array.isArray(sweep.zip)) {
    sweep.zip.forEach((group, g) => {
      if (isRecord(group)) { for (const p of Object.keys(group)) sites.push({ path: p, at: ["zip", g, p] }); }
    });
  }
  return sites;
}

/**
 * Cross-field rules of the `sweep` section: the lists of a zip group have equal lengths; no value (grid) or
 * setting (zip group) is listed twice; a parameter is swept in one place only; no swept path lies inside
 * another (e.g. `initial` and `initial.count`); paths are dotted names without empty parts.
 */
export function sweepRules(sweep: unknown): RuleViolation[] {
  const out: RuleViolation[] = [];
  if (!isRecord(sweep)) return out;
  if (Array.isArray(sweep.zip)) {
    sweep.zip.forEach((group, g) => {
      if (!isRecord(group)) return;
      const entries = Object.entries(group).filter(([, v]) => Array.isArray(v)) as [string, unknown[]][];
      if (entries.length === 0) return;
      const [firstKey, firstList] = entries[0];
      for (const [k, list] of entries.slice(1)) {
        if (list.length !== firstList.length) {
          out.push({
            path: ["zip", g, k],
            message: `has ${list.length} value${list.length === 1 ? "" : "s"} but ${firstKey} has ` +
              `${firstList.length}: lists varied together (one zip group) must have equal lengths`,
          });
        }
      }
    });
  }
  // Repeated values would give identical parameter points.
  if (isRecord(sweep.grid)) {
    for (const [p, list] of Object.entries(sweep.grid)) {
      if (!Array.isArray(list)) continue;
      const seen = new Map<string, number>();
      list.forEach((v, i) => {
        const text = stableText(v);
        const j = seen.get(text);
        if (j === undefined) seen.set(text, i);
        else {out.push({
            path: ["grid", p, i],
            message: `repeats the value at position ${j}: each value once`,
          });}
      });
    }
  }
  if (Array.isArray(sweep.zip)) {
    sweep.zip.forEach((group, g) => {
      if (!isRecord(group)) return;
      const lists = Object.values(group).filter(Array.isArray);
      if (lists.length === 0) return;
      const first = Object.keys(group)[0];
      const n = Math.min(...lists.map((l) => l.length));
      const seen = new Map<string, number>();
      for (let i = 0; i < n; i++) {
        const tuple = stableText(lists.map((l) => l[i]));
        const j = seen.get(tuple);
        if (j === undefined) seen.set(tuple, i);
        else {
          out.push({
            path: ["zip", g, first, i],
            message:
              `setting ${i} of this zip group repeats setting ${j} (the same value in every list): each once`,
          });
        }
      }
    });
  }
  const sites = sweepPathSites(sweep);
  const where = (s: SweepPathSite) => s.at[0] === "grid" ? "sweep.grid" : `sweep.zip[${s.at[1]}]`;
  for (let i = 0; i < sites.length; i++) {
    const s = sites[i];
    const parts = splitSweepPath(s.path);
    if (parts.some((p) => p.trim() === "")) {
      out.push({
        path: s.at,
        message: "is not a parameter path: write keys inside `parameters` joined by dots, e.g. initial.count",
      });
      continue;
    }
    for (let j = 0; j < i; j++) {
      const t = sites[j];
      if (t.path === s.path) {
        out.push({
          path: s.at,
          message: `is already swept in ${where(t)}: a parameter may be swept in one place only`,
        });
        break;
      } else if (s.path.startsWith(t.path + ".") || t.path.startsWith(s.path + ".")) {
        const [outer, inner] = s.path.length < t.path.length ? [s.path, t.path] : [t.path, s.path];
        out.push({
          path: s.at,
          message: `overlaps ${t.path} (swept in ${where(t)}): ${inner} lies inside ${outer}, so the two ` +
            "sweeps would overwrite each other",
        });
        break;
      }
    }
  }
  return out;
}

/** Text that is equal for equal plain values, whatever the key order of maps. */
function stableText(v: unknown): string {
  if (Array.isArray(v)) return `[${v.map(stableText).join(",")}]`;
  if (isRecord(v)) {
    return `{${Object.keys(v).sort().map((k) => `${JSON.stringify(k)}:${stableText(v[k])}`).join(",")}}`;
  }
  return JSON.stringify(v) ?? "undefined";
}

function refineWith<T>(rules: (v: unknown) => RuleViolation[]) {
  return (value: T, ctx: z.RefinementCtx<T>) => {
    for (const r of rules(value)) ctx.addIssue({ code: "custom", path: [...r.path], message: r.message });
  };
}

const nameSchema = z.string()
  .regex(/^[A-Za-z0-9][A-Za-z0-9_-]*$/, {
    error: "must be letters, digits, '-' and '_', starting with a letter or digit (e.g. film-patch)",
  })
  .max(80, { error: "must be at most 80 characters (it names the database and report files)" })
  .describe("Study identifier: letters, digits, '-' and '_'. Names the default database and report files.");

const descriptionSchema = z.string().default("").describe(
  "Free text: the question the study asks, the setup, anything a reader of the report should know.",
);

const sweepListSchema = z.array(z.unknown())
  .min(1, { error: "must list at least one value" })
  .describe("Values for this parameter, in the form the parameter takes in `parameters`.");

const sweepGroupSchema = z.record(z.string(), sweepListSchema).describe(
  "Dotted parameter paths (relative to `parameters`, e.g. initial.count) mapped to lists of values.",
);

/** The `sweep` section. */
export const sweepSchema = z.strictObject({
  grid: sweepGroupSchema.optional().describe(
    "Cartesian product: every combination of the listed values. The first path varies slowest.",
  ),
  zip: z.array(
    sweepGroupSchema.refine((g) => Object.keys(g).length > 0, {
      error: "must list at least one parameter path",
    }),
  ).optional().describe(
    "Groups of lists varied together: within a group all lists have equal length and the i-th values form " +
      "one setting. Groups combine with the grid and with each other as a cartesian product, after the grid.",
  ),
}).superRefine(refineWith(sweepRules)).describe(
  "Parameters to vary. Paths are relative to `parameters`; each listed value replaces the base value. " +
    "Without a sweep the study has one parameter point: the base parameters.",
);

/** The `run` section: controls shared by every engine. */
export const runSchema = z.strictObject({
  duration: z.number().positive().describe(
    "Simulated time of each realisation, > 0. Unit: the engine's time unit (ℓ²/κ for engines with κ = 1).",
  ),
  sampleInterval: z.number().positive().describe(
    "Time between stored frames, > 0 and ≤ duration. Unit: the engine's time unit.",
  ),
  tolerance: z.number().gt(0).lt(1).default(DEFAULT_TOLERANCE).describe(
    "Relative tolerance of adaptive integrators, 0 < tolerance < 1 (dimensionless).",
  ),
  maxDistance: z.number().positive().default(DEFAULT_MAX_DISTANCE).describe(
    "Blow-up guard: a realisation fails when an object gets farther than this from the origin. " +
      "Unit: the engine's length unit.",
  ),
  workers: z.int().min(1).max(1024).optional().describe(
    "Default number of parallel workers, an integer ≥ 1 (the command line may override it). Results do not " +
      "depend on it.",
  ),
  threads: z.int().min(1).max(64).optional().describe(
    "Threads inside one realisation, an integer ≥ 1 (default 1), for engines that can use them (the 3D " +
      "filament engine's fast multipole sum). Results do not depend on it; use it when realisations are fewer " +
      "than cores (workers × threads ≤ cores).",
  ),
  cluster: clusterSchema.optional().describe(
    "Resources for `spindrift run --cluster` (partition, time limit, memory, …); flags override them. " +
      "Never part of a hash: results do not depend on where they were computed.",
  ),
}).superRefine(refineWith(runRules)).describe("Run controls shared by every engine.");

/** The `observables.classification` section (docs/methods.md §4 and §8; defaults from `DEFAULT_CLASSIFICATION`). */
export const classificationSchema = z.strictObject({
  separationFactor: z.number().positive().default(DEFAULT_CLASSIFICATION.separationFactor).describe(
    "f: 2D, a vortex pair is a dipole candidate when its separation is < f·ℓ, ℓ the mean intervortex distance " +
      "of the main cluster; 3D, a loop's effective radius must be < f·ℓ (dimensionless).",
  ),
  radiusFactor: z.number().positive().default(DEFAULT_CLASSIFICATION.radiusFactor).describe(
    "k: an object must be farther than k·R_rms(main cluster) from the cluster centre (dimensionless).",
  ),
  stickyFrames: z.int().min(1).default(DEFAULT_CLASSIFICATION.stickyFrames).describe(
    "K: consecutive stored frames the criteria must hold before the label sticks (integer ≥ 1).",
  ),
  outwardCosine: z.number().min(-1).lt(1).default(DEFAULT_CLASSIFICATION.outwardCosine).describe(
    "Minimum cosine between the object's velocity and its outward direction, in [−1, 1) (dimensionless).",
  ),
  speedTolerance: z.number().positive().default(DEFAULT_CLASSIFICATION.speedTolerance).describe(
    "2D: relative tolerance of the pair speed against κ/(2πd); 3D: factor on the ring-speed check " +
      "(dimensionless).",
  ),
}).describe("Thresholds that label objects as main cluster, evaporated or stray.");

/** Cross-field rules of the `observables` section: no observable listed twice. */
export function observablesRules(observables: unknown): RuleViolation[] {
  if (!isRecord(observables) || !Array.isArray(observables.record)) return [];
  const record: unknown[] = observables.record;
  const out: RuleViolation[] = [];
  record.forEach((id, i) => {
    if (typeof id === "string" && record.indexOf(id) < i) {
      out.push({ path: ["record", i], message: `lists ${id} a second time; list each observable once` });
    }
  });
  return out;
}

/** The `observables.profile` section: radial-profile binning of the `cluster` observable (docs/methods.md §5.2). */
export const profileSchema = z.strictObject({
  bins: z.int().min(1).max(1000).default(DEFAULT_PROFILE.bins).describe(
    "Number of radial bins (annuli in 2D, spherical shells in 3D) of the main cluster's density profile " +
      "(dimensionless integer, 1–1000). Objects beyond the last bin are counted in profile_outside.",
  ),
  binFraction: z.number().positive().max(100).default(DEFAULT_PROFILE.binFraction).describe(
    "Bin width as a fraction of the main cluster's RMS radius in the first frame (dimensionless). The profile " +
      "reaches bins × binFraction × R_rms(0): make that cover the cluster at the end of the run for the " +
      "Vinen-equation fit (default 30 × 0.1 = 3 R_rms(0)).",
  ),
}).describe("Radial density profile binning of the cluster observable (default: 30 bins of R_rms(0)/10).");

/** The `observables` section. */
export const observablesSchema = z.strictObject({
  record: z.array(z.enum(OBSERVABLE_IDS as [string, ...string[]]))
    .min(1, {
      error: `must list at least one of ${OBSERVABLE_IDS.join(", ")} (leave \`record\` out to record all)`,
    })
    .default([...OBSERVABLE_IDS])
    .describe(`Observables to compute and store for every realisation: ${OBSERVABLE_IDS.join(", ")}.`),
  classification: classificationSchema.default({ ...DEFAULT_CLASSIFICATION }),
  profile: profileSchema.optional(),
}).superRefine(refineWith(observablesRules)).default({
  record: [...OBSERVABLE_IDS],
  classification: { ...DEFAULT_CLASSIFICATION },
}).describe(
  "What to measure on each realisation's frames.",
);

const seedSchema = z.union([z.int(), z.string().min(1).max(200)], {
  error: "must be an integer (at most 9007199254740991 in size; quote longer numbers) or a non-empty text",
}).describe("Master seed: an integer or a text. Every realisation's generator state is hashed from it.");

/** The master seed of a study whose engine draws no random numbers and that gives none (`Engine.usesSeed`). */
export const SEED_WHEN_UNUSED = 0;

/** `seed` of an engine that draws no random numbers: optional. */
const unusedSeedSchema = seedSchema.default(SEED_WHEN_UNUSED).describe(
  "Master seed: optional for this engine, whose realisations draw no random numbers (default 0).",
);

function studyShape<E extends z.ZodType, P extends z.ZodType>(engine: E, parameters: P, usesSeed = true) {
  return {
    name: nameSchema,
    description: descriptionSchema,
    engine,
    parameters,
    sweep: sweepSchema.optional(),
    realisations: z.int().min(1).max(MAX_REALISATIONS).default(1).describe(
      "Independent realisations per parameter point (each with its own seed), integer ≥ 1.",
    ),
    seed: usesSeed ? seedSchema : unusedSeedSchema,
    run: runSchema,
    observables: observablesSchema,
  };
}

/**
 * The study schema with `engine` any text and `parameters` any map: checks every section except the engine's
 * parameters. Its output type is {@link StudyFile}.
 */
export const studyShellSchema = z.strictObject(
  studyShape(
    z.string().min(1).describe("Engine id, e.g. point-vortex-2d."),
    z.record(z.string(), z.unknown()).describe("The engine's parameters (see the engine's schema)."),
  ),
);

/**
 * A validated study file. `parameters` holds the engine parameters as written (plain YAML values, engine
 * defaults not yet applied); `normalizeStudy` applies the sweep to them and parses each parameter point with
 * the engine's schema.
 */
export type StudyFile = z.output<typeof studyShellSchema>;

/** The member of the study union for one engine: `engine` is its id, `parameters` its paramsSchema. */
// deno-lint-ignore no-explicit-any
export function engineStudySchema(engine: Engine<any>) {
  return z.strictObject(
    studyShape(
      z.literal(engine.id).describe(engine.title),
      engine.paramsSchema.describe(`Parameters of the ${engine.id} engine (${engine.title}).`),
      engine.usesSeed !== false,
    ),
  );
}

/**
 * The study schema over a list of engines: a discriminated union on `engine`.
 *
 * @example
 * ```ts
 * const schema = studySchemaFor(ENGINES);
 * schema.safeParse({ name: "x", engine: "point-vortex-2d", parameters: { … }, seed: 1, run: { … } });
 * ```
 */
// deno-lint-ignore no-explicit-any
export function studySchemaFor(engines: readonly Engine<any>[]) {
  if (engines.length === 0) throw new RangeError("studySchemaFor: at least one engine is needed");
  const members = engines.map(engineStudySchema);
  return z.discriminatedUnion("engine", members as unknown as [typeof members[0], ...typeof members])
    .describe("A spindrift parameter study of spreading quantized-vortex clouds.");
}

/** The study schema over every registered engine. */
export const studySchema = studySchemaFor(ENGINES);

/**
 * JSON Schema (draft 2020-12) of study files over `engines`, describing the input side (fields with defaults
 * are optional). Editors with YAML language support use it for completion and checks.
 *
 * @example
 * ```ts
 * const json = studyJsonSchema(ENGINES);
 * await Deno.writeTextFile("study/schema.json", JSON.stringify(json, null, 2) + "\n");
 * ```
 */
// deno-lint-ignore no-explicit-any
export function studyJsonSchema(engines: readonly Engine<any>[] = ENGINES): Record<string, unknown> {
  const json = z.toJSONSchema(studySchemaFor(engines), {
    target: "draft-2020-12",
    io: "input",
    unrepresentable: "any",
  }) as Record<string, unknown>;
  const { $schema, ...rest } = json;
  return {
    $schema,
    title: "spindrift study",
    ...rest,
  };
}
