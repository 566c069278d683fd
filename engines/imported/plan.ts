/**
 * From validated parameters and a realisation index to what to read: the file, its format, which columns feed
 * which slots, which rows belong to the realisation, and the unit factors.
 *
 * File choice:
 * - `source.files` as a list: realisation i reads the i-th path;
 * - `source.files` as a pattern: `{index}` → i, `{number}` → i + 1, `{index:3}` → zero-padded to 3 digits;
 * - `source.file` with `source.realisationColumn`: realisation i reads the rows whose realisation value is
 *   `realisationValues[i]`, or `i + realisationOffset` (default offset 0);
 * - `source.file` with an HDF5 `source.group` pattern: realisation i reads the group with i substituted;
 * - `source.file` alone: a single realisation (index 0).
 * Relative paths resolve against `source.directory` (itself relative to the study file's folder), else against
 * the study file's folder (`EngineRunInput.baseDirectory`), else the working directory.
 *
 * @example
 * ```ts
 * expandPattern("runs/r{number:3}.csv", 4); // "runs/r005.csv"
 * ```
 */
import { fail } from "./_messages.ts";
import { type AssemblerConfig, Slot, type SlotIndex } from "./assemble.ts";
import {
  columnName,
  type ColumnSpec,
  columnUnit,
  type DataFormat,
  type Filaments3dParams,
  fileFormat,
  PLACEHOLDER,
  type SourceParams,
  type Tracks2dParams,
} from "./params.ts";
import {
  circulationReading,
  type CirculationUnit,
  lengthFactor,
  type LengthUnit,
  timeFactor,
  type TimeUnit,
} from "./units.ts";

/** A column of the file feeding one slot. */
export interface MappedColumn {
  readonly slot: SlotIndex;
  /** Name (header, JSON key, dataset path) or 1-based position. */
  readonly ref: string | number;
  /** The study parameter that maps it, for messages (e.g. "columns.x"). */
  readonly param: string;
  /** The column may be left out (set to null) when the files have none. */
  readonly optional: boolean;
}

/** Everything a reader needs for one realisation. */
export interface ReadPlan {
  readonly format: DataFormat;
  /** Path to open (resolved against source.directory). */
  readonly path: string;
  /** Path as shown in messages. */
  readonly display: string;
  readonly columns: readonly MappedColumn[];
  /** Row selection by realisation column, or null (the whole file is this realisation). */
  readonly filter: { readonly ref: string | number; readonly value: number; readonly param: string } | null;
  readonly delimiter: string;
  readonly comment: string | null;
  readonly header: boolean;
  /** HDF5 group holding the column datasets (placeholders expanded). */
  readonly group: string;
}

/** Replaces {index}/{number} (optionally zero-padded, {index:3}) with the realisation's index. */
export function expandPattern(pattern: string, index: number): string {
  return pattern.replace(PLACEHOLDER, (_m, kind: string, width: string | undefined) => {
    const v = String(kind === "number" ? index + 1 : index);
    return width === undefined ? v : v.padStart(Number(width), "0");
  });
}

function joinPath(directory: string | undefined, path: string): string {
  if (directory === undefined || path.startsWith("/")) return path;
  if (path === ".") return directory;
  if (directory === ".") return path;
  return directory.endsWith("/") ? directory + path : `${directory}/${path}`;
}

function fileFor(source: SourceParams, index: number): { path: string; filter: ReadPlan["filter"] } {
  if (source.files !== undefined) {
    if (Array.isArray(source.files)) {
      const count = source.files.length;
      if (index >= count) {
        fail(
          `no file for realisation ${index}: source.files lists ${count} file${count === 1 ? "" : "s"} ` +
            `(realisations 0–${count - 1}); list more files or lower realisations`,
        );
      }
      return { path: source.files[index], filter: null };
    }
    return { path: expandPattern(source.files, index), filter: null };
  }
  const file = source.file as string;
  if (source.realisationColumn === undefined) {
    const perGroup = source.group !== undefined && source.group.match(PLACEHOLDER) !== null;
    if (index > 0 && !perGroup) {
      fail(
        `source.file '${file}' holds one realisation (no source.realisationColumn), but this is realisation ` +
          `${index}; set realisations: 1, name the column that numbers the realisations, or (HDF5) put {index} ` +
          "in source.group",
      );
    }
    return { path: file, filter: null };
  }
  let value: number;
  if (source.realisationValues !== undefined) {
    if (index >= source.realisationValues.length) {
      fail(
        `no realisation value for realisation ${index}: source.realisationValues lists ` +
          `${source.realisationValues.length}; list more values or lower realisations`,
      );
    }
    value = source.realisationValues[index];
  } else value = index + (source.realisationOffset ?? 0);
  return { path: file, filter: { ref: source.realisationColumn, value, param: "source.realisationColumn" } };
}

/**
 * The data files realisations 0 … `realisations` − 1 read, relative to the study file's folder (`directory`
 * applied) or absolute, each once: what the point's content fingerprint covers (`Engine.inputFiles`).
 */
export function sourceFilePaths(source: SourceParams, realisations: number): string[] {
  const files = source.file !== undefined
    ? [source.file]
    : Array.isArray(source.files)
    ? source.files.slice(0, Math.max(1, realisations))
    : Array.from({ length: Math.max(1, realisations) }, (_, i) => expandPattern(source.files as string, i));
  return [...new Set(files.map((f) => joinPath(source.directory, f)))];
}

/** The read plan of realisation `index` (fails clearly when the realisation has no data source). */
export function planRead(
  params: Tracks2dParams | Filaments3dParams,
  dimension: 2 | 3,
  index: number | undefined,
  baseDirectory?: string,
): ReadPlan {
  const source = params.source;
  const needsIndex = source.files !== undefined || source.realisationColumn !== undefined;
  if (index === undefined && needsIndex) {
    fail("the runner did not pass the realisation index, which selects this realisation's data");
  }
  const { path, filter } = fileFor(source, index ?? 0);
  // The format of this realisation's own file: a list may mix formats (e.g. .csv and .h5).
  const format = fileFormat(source, path) as DataFormat;
  const columns: MappedColumn[] = [];
  const add = (
    slot: SlotIndex,
    key: string,
    spec: ColumnSpec<string> | null | undefined,
    optional = false,
  ) => {
    if (spec === null || spec === undefined) return;
    columns.push({ slot, ref: columnName(spec), param: `columns.${key}`, optional });
  };
  const c = params.columns as Record<string, ColumnSpec<string> | null | undefined>;
  add(Slot.T, "t", c.t);
  add(Slot.ID, "id", c.id, dimension === 3);
  add(Slot.X, "x", c.x);
  add(Slot.Y, "y", c.y);
  if (dimension === 2) add(Slot.CIRCULATION, "circulation", c.circulation);
  else {
    add(Slot.Z, "z", c.z);
    add(Slot.LOOP, "loop", c.loop);
    add(Slot.ORDER, "order", c.order, true);
    add(Slot.MARKER, "marker", c.marker, true);
  }
  return {
    format,
    path: joinPath(joinPath(baseDirectory, source.directory ?? "."), path),
    display: joinPath(joinPath(baseDirectory, source.directory ?? "."), path),
    columns,
    filter,
    delimiter: source.delimiter === "tab" ? "\t" : source.delimiter ?? (format === "tsv" ? "\t" : ","),
    comment: source.comment === undefined ? "#" : source.comment,
    header: source.header ?? true,
    group: source.group === undefined ? "/" : expandPattern(source.group, index ?? 0),
  };
}

/** The assembler settings (units, optional columns) of these parameters, except controls and source. */
export function assemblerSettings(
  params: Tracks2dParams | Filaments3dParams,
  dimension: 2 | 3,
): Omit<AssemblerConfig, "controls" | "source" | "selection"> {
  const c = params.columns as Record<string, ColumnSpec<string> | null | undefined>;
  const units = params.units;
  const len = (key: string) => {
    const spec = c[key];
    return spec === undefined || spec === null
      ? 1
      : lengthFactor(columnUnit(spec as ColumnSpec<LengthUnit>), units, key);
  };
  const three = dimension === 3;
  const p3 = params as Filaments3dParams;
  return {
    dimension,
    timing: params.timing,
    factors: {
      t: timeFactor(columnUnit(c.t as ColumnSpec<TimeUnit>), units, "t"),
      x: len("x"),
      y: len("y"),
      z: three ? len("z") : 1,
    },
    circulation: three
      ? { asSign: false, factor: 1 }
      : circulationReading(columnUnit(c.circulation as ColumnSpec<CirculationUnit>)),
    has: {
      id: c.id !== null && c.id !== undefined,
      order: three && c.order !== null && c.order !== undefined,
      marker: three && c.marker !== null && c.marker !== undefined,
    },
    markerDefault: three && p3.markersWithoutColumn === "all" ? 1 : 0,
  };
}

/** "rows with run = 3" for messages, or null. */
export function selectionText(plan: ReadPlan): string | null {
  if (plan.filter === null) return null;
  const ref = plan.filter.ref;
  return `rows with ${typeof ref === "number" ? `column ${ref}` : ref} = ${plan.filter.value}`;
}
