/**
 * HDF5 reader: one 1-D numeric dataset per column (all of equal length, row i of the table is entry i of every
 * dataset), inside `source.group` (default the root group; `{index}` allowed, so one file may hold one group
 * per realisation). Datasets are read in slices of {@link HDF5_CHUNK_ROWS} rows through libhdf5's hyperslab
 * selection, so memory does not grow with the dataset length. Integer (including 64-bit) and floating-point
 * datasets are accepted; an [n, 1] dataset counts as 1-D.
 *
 * Uses h5wasm (the HDF5 C library compiled to WebAssembly; its Node build reads the host file system
 * directly), loaded on first use.
 *
 * Messages name the file, the dataset, the index and the offending value, e.g.
 * `runs.h5 dataset '/r3/x' index 16: got NaN, expected a finite number`.
 *
 * @example
 * ```ts
 * await readHdf5(plan, assembler); // plan from planRead(), assembler a FrameAssembler
 * ```
 */
import { absentHint, checkDataFile, didYouMean, fail, listNames } from "./_messages.ts";
import { type FrameAssembler, type RowOrigin, SLOT_COUNT, type SlotIndex } from "./assemble.ts";
import type { ReadPlan } from "./plan.ts";

type H5 = typeof import("h5wasm/node");
type H5Dataset = InstanceType<H5["Dataset"]>;
type H5Group = InstanceType<H5["Group"]>;

/** Rows read per slice. */
export const HDF5_CHUNK_ROWS = 65536;

/** HDF5 type classes (H5Tpublic.h): integer and floating point are the numeric ones. */
const H5T_INTEGER = 0;
const H5T_FLOAT = 1;
const H5T_CLASS_NAMES: Readonly<Record<number, string>> = {
  2: "time",
  3: "string",
  4: "bitfield",
  5: "opaque",
  6: "compound",
  7: "reference",
  8: "enum",
  9: "variable-length",
  10: "array",
};

let loading: Promise<H5> | null = null;

/** Loads h5wasm once, with errors thrown (not printed) so they can become clear messages. */
export function loadH5(): Promise<H5> {
  loading ??= (async () => {
    const h5 = await import("h5wasm/node");
    const module = await h5.ready;
    module.activate_throwing_error_handler();
    return h5;
  })();
  return loading;
}

/** The innermost reason of an HDF5 error stack ("file signature not found", …). */
export function hdf5Reason(e: unknown): string {
  const text = String((e as Error)?.message ?? e);
  const frames = [...text.matchAll(/#\d+:.*?\(\): (.*)$/gm)];
  if (frames.length > 0) return frames[frames.length - 1][1].trim();
  return text.split("\n")[0];
}

function joinDatasetPath(group: string, name: string): string {
  if (name.startsWith("/")) return name;
  return group.endsWith("/") ? group + name : `${group}/${name}`;
}

class Hdf5Origin implements RowOrigin {
  ref = 0;
  readonly #display: string;
  readonly #paths: string[];
  constructor(display: string, paths: string[]) {
    this.#display = display;
    this.#paths = paths;
  }
  describe(ref: number, slot: SlotIndex | null): string {
    return slot === null
      ? `${this.#display} row ${ref}`
      : `${this.#display} dataset '${this.#paths[slot]}' index ${ref}`;
  }
}

/** Reads the plan's HDF5 file into the assembler. */
export async function readHdf5(plan: ReadPlan, asm: FrameAssembler): Promise<void> {
  await checkDataFile(plan.path, plan.display);
  const h5 = await loadH5();
  let file: InstanceType<H5["File"]>;
  try {
    file = new h5.File(await Deno.realPath(plan.path), "r");
  } catch (e) {
    fail(`cannot read '${plan.display}' as HDF5: ${hdf5Reason(e)}`);
  }
  try {
    readOpenFile(h5, file, plan, asm);
  } finally {
    file.close();
  }
}

function readOpenFile(h5: H5, file: InstanceType<H5["File"]>, plan: ReadPlan, asm: FrameAssembler): void {
  const group = plan.group;
  const where = plan.display;
  const groupEntity = group === "/" ? file : file.get(group);
  if (!(groupEntity instanceof h5.Group)) {
    const parent = group.slice(0, group.lastIndexOf("/")) || "/";
    const parentEntity = parent === "/" ? file : file.get(parent);
    const names = parentEntity instanceof h5.Group ? parentEntity.keys() : [];
    const last = group.slice(group.lastIndexOf("/") + 1);
    fail(
      `${where}: group '${group}' (source.group) ${groupEntity === null ? "not found" : "is not a group"}` +
        `${didYouMean(last, names)}; '${parent}' holds ${names.length > 0 ? listNames(names) : "nothing"}`,
    );
  }
  const paths: string[] = new Array(SLOT_COUNT).fill("");
  const open = (
    ref: string | number,
    param: string,
    optional = false,
  ): { ds: H5Dataset; path: string; length: number } => {
    if (typeof ref === "number") fail(`${param}: HDF5 columns are dataset paths, not positions`);
    const path = joinDatasetPath(group, ref);
    const entity = file.get(path);
    if (!(entity instanceof h5.Dataset)) {
      const g = groupEntity as H5Group;
      const names = g.keys();
      fail(
        `${where}: dataset '${path}' (${param}) ${entity === null ? "not found" : "is not a dataset"}` +
          `${didYouMean(ref, names)}; '${group}' holds ${names.length > 0 ? listNames(names) : "nothing"}` +
          absentHint(param, optional),
      );
    }
    const meta = entity.metadata;
    if (meta.type !== H5T_INTEGER && meta.type !== H5T_FLOAT) {
      const kind = H5T_CLASS_NAMES[meta.type] ?? `class ${meta.type}`;
      fail(
        `${where}: dataset '${path}' (${param}) holds ${kind} values, expected numbers (integer or float)`,
      );
    }
    const shape = meta.shape ?? [];
    if (!(shape.length === 1 || (shape.length === 2 && shape[1] === 1))) {
      const dims = shape.join(", ");
      fail(
        `${where}: dataset '${path}' (${param}) has shape [${dims}], expected one value per row (a 1-D dataset)`,
      );
    }
    return { ds: entity, path, length: shape[0] };
  };

  const columns: { slot: SlotIndex; ds: H5Dataset; path: string; length: number }[] = [];
  for (const col of plan.columns) {
    const d = open(col.ref, col.param, col.optional);
    paths[col.slot] = d.path;
    columns.push({ slot: col.slot, ...d });
  }
  const filter = plan.filter === null ? null : open(plan.filter.ref, plan.filter.param);
  const all = filter === null ? columns : [...columns, { slot: -1, ...filter }];
  const n = all[0].length;
  for (const c of all) {
    if (c.length !== n) {
      fail(
        `${where}: dataset '${c.path}' has ${c.length} entries, '${all[0].path}' has ${n} (unequal point ` +
          "counts: every column dataset needs one entry per row)",
      );
    }
  }

  const origin = new Hdf5Origin(where, paths);
  const row = new Float64Array(SLOT_COUNT);
  const chunks: ArrayLike<number>[] = new Array(SLOT_COUNT).fill(null);
  const wanted = plan.filter?.value ?? 0;
  for (let start = 0; start < n; start += HDF5_CHUNK_ROWS) {
    const end = Math.min(n, start + HDF5_CHUNK_ROWS);
    const realisation = filter === null ? null : sliceNumbers(filter.ds, start, end);
    for (const c of columns) chunks[c.slot] = sliceNumbers(c.ds, start, end);
    for (let i = 0; i < end - start; i++) {
      const ref = start + i;
      if (realisation !== null) {
        const v = realisation[i];
        if (!Number.isInteger(v)) {
          const at = `${where} dataset '${filter!.path}' index ${ref}`;
          fail(`${at}: got ${v}, expected an integer realisation number (${plan.filter!.param})`);
        }
        if (v !== wanted) continue;
      }
      origin.ref = ref;
      for (let j = 0; j < columns.length; j++) {
        const s = columns[j].slot;
        row[s] = chunks[s][i];
      }
      if (!asm.row(row, origin)) return;
    }
  }
}

/** Entries [start, end) of a numeric dataset as numbers (64-bit integers converted). */
function sliceNumbers(ds: H5Dataset, start: number, end: number): ArrayLike<number> {
  const data = ds.slice([[start, end]]);
  if (data instanceof BigInt64Array || data instanceof BigUint64Array) {
    const out = new Float64Array(data.length);
    for (let i = 0; i < data.length; i++) out[i] = Number(data[i]);
    return out;
  }
  return data as unknown as ArrayLike<number>;
}
