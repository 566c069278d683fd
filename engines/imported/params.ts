/**
 * The `parameters` section of the imported-data engines (`imported-tracks-2d`, `imported-filaments-3d`): where
 * the files are, how their columns map to spindrift's fields, what units they use, and how record times are
 * matched to the study's sampling. A zod 4 schema, the single source of truth for the format.
 *
 * ```yaml
 * engine: imported-tracks-2d
 * parameters:
 *   source:
 *     files: data/run{index}.csv        # one file per realisation ({index} from 0, {number} from 1)
 *     # or: file: all.csv + realisationColumn: run
 *   columns:                            # default: the names of `spindrift export` (t, id, x, y, circulation)
 *     t: { name: time, unit: ms }
 *     x: { name: x_um, unit: um }
 *     y: { name: y_um, unit: um }
 *     circulation: { name: sign, unit: sign }
 *   units:                              # what one study unit is
 *     length: { value: 2.5, unit: um }
 *     time: { value: 1, unit: ms }
 * ```
 *
 * Data layout (all formats): one row per object per record time, rows sorted by time (ties in any order).
 * - 2D tracks: time, vortex id (integer, persistent along the track), x, y, circulation (in κ, or its sign).
 * - 3D filament snapshots: time, loop id, x, y, z, and optionally the point's position along its loop (order),
 *   a point id (persistent for markers) and a 0/1 marker flag. Without an order column each loop's rows must be
 *   contiguous and in order along the line. Every loop needs ≥ 3 points.
 * - CSV/TSV: a header names the columns (or `source.header: false` and 1-based positions); "#" lines are
 *   comments; a row with only the time marks a record time without objects. JSON lines: the same keys, one row
 *   object per line or one frame per line (arrays). HDF5: one 1-D numeric dataset per column in `source.group`.
 *
 * Units (`columns.<field>.unit`, converted to `units`): length m, cm, mm, um (µm), nm, xi (ξ, needs
 * `units.healingLength` to meet a metric unit); time s, ms, us (µs), ns; circulation kappa or sign. Every column
 * also takes a plain `scale` factor (e.g. µm per pixel). Without a unit, values are already in study units.
 *
 * @example
 * ```ts
 * import { tracks2dParamsSchema } from "./params.ts";
 * const p = tracks2dParamsSchema.parse({ source: { files: "walkers/r{index}.csv" } });
 * p.timing.matchTolerance; // 1e-6 (fraction of run.sampleInterval)
 * ```
 */
import { z } from "zod";
import {
  CIRCULATION_UNITS,
  type CirculationUnit,
  LENGTH_UNITS,
  lengthFactor,
  type LengthUnit,
  type StudyUnits,
  TIME_UNITS,
  timeFactor,
  type TimeUnit,
  UnitError,
} from "./units.ts";

/** Data formats the engines read. */
export const FORMATS = ["csv", "tsv", "jsonl", "hdf5"] as const;
export type DataFormat = typeof FORMATS[number];

/** File extensions that imply a format when `source.format` is left out. */
export const EXTENSION_FORMATS: Readonly<Record<string, DataFormat>> = {
  ".csv": "csv",
  ".tsv": "tsv",
  ".tab": "tsv",
  ".jsonl": "jsonl",
  ".ndjson": "jsonl",
  ".h5": "hdf5",
  ".hdf5": "hdf5",
  ".he5": "hdf5",
};

/** Delimiters of delimited text ("tab" is "\t"; "whitespace" splits on runs of spaces and tabs, no quoting). */
export const DELIMITERS = [",", ";", "\t", "tab", "|", "whitespace"] as const;
export type Delimiter = typeof DELIMITERS[number];

/** `{index}` (from 0) or `{number}` (from 1), optionally zero-padded: `{index:3}` → 007. */
export const PLACEHOLDER = /\{(index|number)(?::(\d{1,2}))?\}/g;

const positive = () => z.number().positive().refine(Number.isFinite, { message: "must be a finite number" });

const columnRef = z.union([
  z.string().min(1).describe(
    "Column name: CSV/TSV header, JSON key, or HDF5 dataset path (relative to source.group).",
  ),
  z.int().min(1).describe(
    "1-based column position, for CSV/TSV files without a header (source.header: false).",
  ),
]);

function column<U extends z.ZodType>(unit: U | null, what: string) {
  const spec = unit === null ? z.object({ name: columnRef }).strict() : z.object({
    name: columnRef,
    unit: unit.optional().describe(`Unit of the raw values (${what}); default: already in study units.`),
    scale: positive().optional().describe(
      "Plain factor applied to the raw values before the unit conversion (e.g. µm per pixel); default 1.",
    ),
  }).strict();
  return z.union([columnRef, spec]);
}

const lengthUnit = z.enum(LENGTH_UNITS);
const timeUnit = z.enum(TIME_UNITS);
const circulationUnit = z.enum(CIRCULATION_UNITS);

const lengthColumn = (name: string) =>
  column(lengthUnit, "m, cm, mm, um, nm or xi").default(name).describe(
    `Column holding ${name} (length); default '${name}'.`,
  );

/** Column reference as written in the study: a name, a position, or an object with name/unit/scale. */
export type ColumnSpec<U extends string = never> =
  | string
  | number
  | { readonly name: string | number; readonly unit?: U; readonly scale?: number };

const lengthQuantity = z.object({
  value: positive().describe("Positive multiplier of the unit below (dimensionless)."),
  unit: lengthUnit.describe("Length unit: m, cm, mm, um (µm), nm, or xi (ξ, the healing length)."),
}).strict();

const timeQuantity = z.object({
  value: positive().describe("Positive multiplier of the unit below (dimensionless)."),
  unit: timeUnit.describe("Time unit: s, ms, us (µs), ns."),
}).strict();

/** `parameters.units`: what one study unit is (the target of every column conversion). */
export const unitsSchema = z.object({
  length: z.union([lengthUnit, lengthQuantity]).optional().describe(
    "One study length unit, e.g. um or { value: 2.5, unit: um } (ℓ₀ = 2.5 µm) or { value: 4, unit: xi }. " +
      "Needed only when a length column has a unit.",
  ),
  time: z.union([timeUnit, timeQuantity]).optional().describe(
    "One study time unit, e.g. ms or { value: 0.8, unit: ms }. Needed only when the time column has a unit " +
      "(or give units.kappa for the natural unit ℓ²/κ).",
  ),
  healingLength: lengthQuantity.optional().describe(
    "The healing length ξ in a metric unit; needed only when ξ meets a metric unit.",
  ),
  kappa: positive().optional().describe(
    "Circulation quantum κ in m²/s (⁴He: 9.97e-8). With a metric units.length and no units.time, the study " +
      "time unit is ℓ²/κ, so a fitted D is D/κ.",
  ),
}).strict().describe("What one study unit is; columns with a unit are converted to these units.");

/** `parameters.timing`: how records are matched to the study's frame times k·Δt. */
export const timingSchema = z.object({
  origin: z.enum(["first-record", "zero"]).default("first-record").describe(
    "first-record: times are measured from the realisation's first record (its frame 0); zero: times are " +
      "used as they are, and a record must exist at t = 0.",
  ),
  matchTolerance: z.number().min(0).lt(0.5).default(1e-6).describe(
    "Frame k takes the records whose time is nearest to k·run.sampleInterval, within this fraction of " +
      "run.sampleInterval (dimensionless, 0 ≤ value < 0.5; the default accepts only round-off). Records at " +
      "other times are skipped; a frame time with no record in reach is an error.",
  ),
  allowEarlyEnd: z.boolean().default(false).describe(
    "Accept data that end before run.duration (the realisation then stops at its last frame). Default: " +
      "such a file is an error.",
  ),
}).strict().describe("Matching record times to the study's frame times t_k = k·run.sampleInterval.");

const sourceSchema = z.object({
  format: z.enum(FORMATS).optional().describe(
    "csv, tsv, jsonl (JSON lines) or hdf5. Default: from the file extension (.csv; .tsv/.tab; .jsonl/.ndjson; " +
      ".h5/.hdf5/.he5).",
  ),
  files: z.union([
    z.string().min(1).describe(
      "Path pattern with {index} (realisation index from 0) or {number} (from 1), optionally zero-padded: " +
        "run{number:3}.csv → run001.csv, run002.csv, … Inside a YAML flow map ({ … }) quote the pattern.",
    ),
    z.array(z.string().min(1)).min(1).describe("One path per realisation, in realisation order."),
  ]).optional().describe("One file per realisation."),
  file: z.string().min(1).optional().describe(
    "One file for all realisations (with realisationColumn), or for a single realisation.",
  ),
  realisationColumn: columnRef.optional().describe(
    "Column (or HDF5 dataset) holding the realisation number of each row; realisation i reads the rows whose " +
      "value is realisationValues[i] (default: i + realisationOffset).",
  ),
  realisationOffset: z.int().optional().describe(
    "Value of the realisation column for realisation 0 (an integer label, dimensionless; default 0; 1 if the " +
      "file numbers runs from 1).",
  ),
  realisationValues: z.array(z.int()).min(1).optional().describe(
    "Explicit realisation-column value (an integer label, dimensionless) for each realisation index.",
  ),
  group: z.string().min(1).optional().describe(
    "HDF5 only: group holding the column datasets; may contain {index}/{number} (e.g. /runs/r{index}). " +
      "Default: the root group.",
  ),
  directory: z.string().min(1).optional().describe(
    "Folder that relative paths are resolved against; itself relative to the study file's folder. Default: the study file's folder.",
  ),
  delimiter: z.enum(DELIMITERS).optional().describe(
    "CSV/TSV only: field delimiter (',' ';' tab '|' or whitespace). Default ',' for csv and tab for tsv.",
  ),
  comment: z.string().length(1).nullable().optional().describe(
    "CSV/TSV/JSON lines: lines starting with this character are skipped (default '#'; null: none).",
  ),
  header: z.boolean().optional().describe(
    "CSV/TSV only: the first line names the columns (default true). Without a header, columns are given by " +
      "1-based position.",
  ),
}).strict().describe("Which files hold the data, and how to read them.");

export type SourceParams = z.output<typeof sourceSchema>;

const columns2dSchema = z.object({
  t: column(timeUnit, "s, ms, us, ns").default("t").describe("Column holding the time; default 't'."),
  id: column(null, "").default("id").describe(
    "Column holding the vortex id (an integer, persistent along a track); default 'id'.",
  ),
  x: lengthColumn("x"),
  y: lengthColumn("y"),
  circulation: column(circulationUnit, "kappa: multiples of κ; sign: only the sign is kept").default(
    "circulation",
  ).describe("Column holding the signed circulation; default 'circulation'."),
}).strict().describe("Where each field is in the files (names, units, scales).");

const optionalColumn = (name: string, what: string) =>
  z.union([column(null, ""), z.null()]).default(name).describe(
    `Column holding ${what}; default '${name}'; null if the files have none.`,
  );

const columns3dSchema = z.object({
  t: column(timeUnit, "s, ms, us, ns").default("t").describe("Column holding the time; default 't'."),
  id: optionalColumn(
    "id",
    "the point id (integer; persistent for markers). Without it, points are numbered 0, 1, … in each frame",
  ),
  x: lengthColumn("x"),
  y: lengthColumn("y"),
  z: lengthColumn("z"),
  loop: column(null, "").default("loop").describe("Column holding the loop id (integer); default 'loop'."),
  order: optionalColumn(
    "order",
    "the position of the point along its loop (integer). Without it, each loop's rows must be contiguous and " +
      "in order along the line",
  ),
  marker: optionalColumn("marker", "1 for Lagrangian markers, 0 otherwise"),
}).strict().describe("Where each field is in the files (names, units, scales).");

/** Parameters shared by both imported-data engines. */
const common = {
  source: sourceSchema,
  units: unitsSchema.default({}),
  timing: timingSchema.default({ origin: "first-record", matchTolerance: 1e-6, allowEarlyEnd: false }),
};

type Ctx = z.core.$RefinementCtx;

function extensionOf(path: string): string {
  const base = path.slice(path.lastIndexOf("/") + 1);
  const dot = base.lastIndexOf(".");
  return dot > 0 ? base.slice(dot).toLowerCase() : "";
}

/** The format a source uses: explicit, or from the first file's extension (undefined when unknown). */
export function sourceFormat(source: SourceParams): DataFormat | undefined {
  if (source.format !== undefined) return source.format;
  const first = source.file ?? (Array.isArray(source.files) ? source.files[0] : source.files);
  return first === undefined ? undefined : EXTENSION_FORMATS[extensionOf(first)];
}

/** The format of one file of a source: explicit `source.format`, else from that file's own extension. */
export function fileFormat(source: SourceParams, path: string): DataFormat | undefined {
  return source.format ?? EXTENSION_FORMATS[extensionOf(path)];
}

/** Every file name a source lists (patterns as written). */
function sourceFiles(source: SourceParams): string[] {
  if (source.file !== undefined) return [source.file];
  if (Array.isArray(source.files)) return [...source.files];
  return source.files === undefined ? [] : [source.files];
}

function checkSource(s: SourceParams, ctx: Ctx): void {
  const issue = (path: (string | number)[], message: string) =>
    ctx.addIssue({ code: "custom", path: ["source", ...path], message });
  if ((s.files === undefined) === (s.file === undefined)) {
    issue([], "give exactly one of source.files (one file per realisation) and source.file (one file)");
  }
  if (typeof s.files === "string" && s.files.match(PLACEHOLDER) === null) {
    issue(
      ["files"],
      `'${s.files}' has no {index} or {number}, so every realisation would read the same file; list the ` +
        "files, put {index} in the pattern, or use source.file with source.realisationColumn",
    );
  }
  if (s.realisationColumn === undefined) {
    if (s.realisationOffset !== undefined) issue(["realisationOffset"], "needs source.realisationColumn");
    if (s.realisationValues !== undefined) issue(["realisationValues"], "needs source.realisationColumn");
  } else if (s.file === undefined) {
    issue(
      ["realisationColumn"],
      "selects rows within source.file; with source.files each file is one realisation",
    );
  }
  if (s.realisationOffset !== undefined && s.realisationValues !== undefined) {
    issue(["realisationValues"], "give source.realisationValues or source.realisationOffset, not both");
  }
  // Each listed file is read in its own format (explicit source.format, else its own extension).
  const files = sourceFiles(s);
  const unknown = files.filter((f) => fileFormat(s, f) === undefined);
  if (unknown.length > 0) {
    const known = Object.keys(EXTENSION_FORMATS).join(", ");
    issue(
      ["format"],
      `cannot tell the format from the file name${unknown.length > 1 ? "s" : ""} ` +
        `${unknown.slice(0, 3).map((f) => `'${f}'`).join(", ")}${unknown.length > 3 ? ", …" : ""} ` +
        `(known extensions: ${known}); set source.format`,
    );
  }
  const formats = new Set(files.map((f) => fileFormat(s, f)).filter((f): f is DataFormat => f !== undefined));
  if (formats.size > 0) {
    const list = [...formats].join("/");
    const any = (pred: (f: DataFormat) => boolean) => [...formats].some(pred);
    const delimited = (f: DataFormat) => f === "csv" || f === "tsv";
    if (!any(delimited) && s.delimiter !== undefined) {
      issue(["delimiter"], `applies to csv/tsv files, not ${list}`);
    }
    if (!any(delimited) && s.header !== undefined) issue(["header"], `applies to csv/tsv files, not ${list}`);
    if (!any((f) => f !== "hdf5") && s.comment !== undefined) {
      issue(["comment"], "applies to text files, not hdf5");
    }
    if (!any((f) => f === "hdf5") && s.group !== undefined) {
      issue(["group"], `applies to hdf5 files, not ${list}`);
    }
  }
}

function columnName(spec: ColumnSpec<string>): string | number {
  return typeof spec === "object" ? spec.name : spec;
}

function columnUnit<U extends string>(spec: ColumnSpec<U>): { unit?: U; scale?: number } {
  return typeof spec === "object" ? spec : {};
}

function checkColumns(
  columns: Readonly<Record<string, ColumnSpec<string> | null>>,
  source: SourceParams,
  ctx: Ctx,
): void {
  const headerless = source.header === false;
  const refs: [string, string | number][] = Object.entries(columns)
    .filter(([, spec]) => spec !== null)
    .map(([key, spec]) => [key, columnName(spec as ColumnSpec<string>)]);
  if (source.realisationColumn !== undefined) refs.push(["realisationColumn", source.realisationColumn]);
  const seen = new Map<string | number, string>();
  for (const [key, ref] of refs) {
    const path = key === "realisationColumn" ? ["source", "realisationColumn"] : ["columns", key];
    if (typeof ref === "number" && !headerless) {
      ctx.addIssue({
        code: "custom",
        path,
        message:
          `column position ${ref} needs a file without a header (source.header: false, csv/tsv only); ` +
          "otherwise name the column",
      });
    }
    if (typeof ref === "string" && headerless) {
      ctx.addIssue({
        code: "custom",
        path,
        message:
          `the file has no header (source.header: false), so give the column's 1-based position, not '${ref}'`,
      });
    }
    const other = seen.get(ref);
    if (other !== undefined) {
      ctx.addIssue({
        code: "custom",
        path,
        message: `column ${JSON.stringify(ref)} is already used for ${other}; each field needs its own one`,
      });
    } else seen.set(ref, key);
  }
}

function checkUnits(
  columns: Readonly<Record<string, ColumnSpec<string> | null>>,
  units: StudyUnits,
  ctx: Ctx,
): void {
  const report = (e: unknown, key: string) => {
    if (e instanceof UnitError) {
      ctx.addIssue({ code: "custom", path: ["columns", key, "unit"], message: e.message });
    } else throw e;
  };
  for (const key of ["x", "y", "z"]) {
    const spec = columns[key];
    if (spec === undefined || spec === null) continue;
    try {
      lengthFactor(columnUnit(spec as ColumnSpec<LengthUnit>), units, key);
    } catch (e) {
      report(e, key);
    }
  }
  const t = columns.t;
  if (t !== undefined && t !== null) {
    try {
      timeFactor(columnUnit(t as ColumnSpec<TimeUnit>), units, "t");
    } catch (e) {
      report(e, "t");
    }
  }
}

/** The `parameters` schema of `imported-tracks-2d` (2D point-vortex tracks). */
export const tracks2dParamsSchema = z.object({
  ...common,
  columns: columns2dSchema.default({ t: "t", id: "id", x: "x", y: "y", circulation: "circulation" }),
}).strict().superRefine((p, ctx) => {
  checkSource(p.source, ctx);
  checkColumns(p.columns, p.source, ctx);
  checkUnits(p.columns, p.units, ctx);
});

/** The `parameters` schema of `imported-filaments-3d` (3D vortex-filament snapshots). */
export const filaments3dParamsSchema = z.object({
  ...common,
  columns: columns3dSchema.default({
    t: "t",
    id: "id",
    x: "x",
    y: "y",
    z: "z",
    loop: "loop",
    order: "order",
    marker: "marker",
  }),
  markersWithoutColumn: z.enum(["none", "all"]).optional().describe(
    "Required when columns.marker is null, so the choice is explicit: none (no point is a Lagrangian marker: " +
      "the msd observable then has no objects to follow) or all (every point is a marker; needs persistent " +
      "point ids).",
  ),
  coreRadius: z.union([
    positive().describe("In study length units."),
    lengthQuantity,
  ]).describe(
    "Vortex core parameter a₀ (study length units, or { value, unit }); the ring-speed check of the loop " +
      "classifier needs it (⁴He: about 1e-8 cm).",
  ),
}).strict().superRefine((p, ctx) => {
  checkSource(p.source, ctx);
  checkColumns(p.columns, p.source, ctx);
  checkUnits(p.columns, p.units, ctx);
  if (p.markersWithoutColumn === "all" && p.columns.id === null) {
    ctx.addIssue({
      code: "custom",
      path: ["markersWithoutColumn"],
      message: "'all' makes every point a marker, which needs persistent point ids: map columns.id",
    });
  }
  if (p.markersWithoutColumn !== undefined && p.columns.marker !== null) {
    ctx.addIssue({
      code: "custom",
      path: ["markersWithoutColumn"],
      message: "applies only when columns.marker is null (the files have no marker column)",
    });
  }
  if (p.markersWithoutColumn === undefined && p.columns.marker === null) {
    ctx.addIssue({
      code: "custom",
      path: ["markersWithoutColumn"],
      message:
        "the files have no marker column (columns.marker: null): say which points are Lagrangian markers, " +
        "none (no per-point MSD: the msd observable will have no objects) or all (every point; needs persistent " +
        "ids)",
    });
  }
  if (typeof p.coreRadius === "object") {
    try {
      lengthFactor({ unit: p.coreRadius.unit }, p.units, "coreRadius");
    } catch (e) {
      if (!(e instanceof UnitError)) throw e;
      ctx.addIssue({ code: "custom", path: ["coreRadius", "unit"], message: e.message });
    }
  }
});

export type Tracks2dParams = z.output<typeof tracks2dParamsSchema>;
export type Filaments3dParams = z.output<typeof filaments3dParamsSchema>;

/** Column spec helpers used by the engines. */
export { columnName, columnUnit };
export type { CirculationUnit, LengthUnit, TimeUnit };
