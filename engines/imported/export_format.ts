/**
 * The frame export format: what `spindrift export` writes and what the imported-data engines read back with
 * their default column mapping, so that import(export(x)) gives the same frames bit for bit.
 *
 * CSV (RFC 4180, "," delimiter, "\n" line ends, UTF-8), one header line, then one row per object per stored
 * frame, frames in time order and, within a frame, objects in the frame's order:
 *
 * | dimension | header                                   |
 * |-----------|------------------------------------------|
 * | 2D        | `t,id,x,y,circulation,label`             |
 * | 3D        | `t,id,x,y,z,loop,order,marker,label`     |
 *
 * - `t`: frame time; `x`, `y`, `z`: position; `circulation`: signed circulation in κ — all in the engine's
 *   units, written as the shortest decimal that reads back to the same double (ECMAScript Number::toString;
 *   `-0` is written "-0" so that its sign survives).
 * - `id`: object id (integer). 3D: `loop` is the loop id, `order` the point's position along its loop (0, 1, …;
 *   each loop's points are contiguous and in order), `marker` 1 for Lagrangian markers, else 0.
 * - `label`: the stored classification ("main", "evaporated", "stray"); empty when unknown. Import ignores it
 *   (the classifier labels imported frames afresh).
 * - Optional first column `realisation` (the realisation index), so several realisations can share one file; it
 *   is read back with `source.file` + `source.realisationColumn: realisation`.
 * - A frame with no objects is written as one row with the time (and realisation) and every other field empty.
 * - Lines starting with "#" before the header are comments (provenance); the importer skips them.
 *
 * Method: shortest round-trip decimal conversion (Steele & White; Gay), which `String(number)` implements per the
 * ECMAScript specification, so `Number(String(v)) === v` for every finite double.
 *
 * References: G.L. Steele, J.L. White, "How to print floating-point numbers accurately", PLDI 1990,
 * doi:10.1145/93542.93559. D.M. Gay, "Correctly rounded binary-decimal and decimal-binary conversions",
 * AT&T Numerical Analysis Manuscript 90-10 (1990). ECMA-262, §6.1.6.1.20 Number::toString.
 *
 * @example
 * ```ts
 * using file = await Deno.create("run0.csv");
 * await writeFramesCsv(frames, file, { dimension: 2, comments: ["study: film-patch, realisation 0"] });
 * ```
 */
import { LABEL_NAMES } from "../observables/labels.ts";

/** Header of the 2D export. */
export const EXPORT_COLUMNS_2D = ["t", "id", "x", "y", "circulation", "label"] as const;
/** Header of the 3D export. */
export const EXPORT_COLUMNS_3D = ["t", "id", "x", "y", "z", "loop", "order", "marker", "label"] as const;

/** One frame to export: a `Frame` from an engine, or the decoded columns of a stored frame. */
export interface ExportFrame {
  readonly t: number;
  readonly n: number;
  readonly id: Int32Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z?: Float64Array | null;
  readonly circulation?: Float64Array | null;
  readonly loop?: Int32Array | null;
  readonly marker?: Uint8Array | null;
  /** Classification labels (engines/observables/labels.ts), or null when not classified. */
  readonly label?: Uint8Array | null;
}

export interface ExportOptions {
  readonly dimension: 2 | 3;
  /** Comment lines written before the header (without the leading "# "); line breaks are not allowed. */
  readonly comments?: readonly string[];
  /** Write the header line (default true); false when appending more realisations to one file. */
  readonly header?: boolean;
  /** When given, every row starts with a `realisation` column holding this index. */
  readonly realisation?: number;
}

/** Where bytes go: a Deno.FsFile (partial writes are completed) or a WritableStreamDefaultWriter. */
export interface ByteWriter {
  write(chunk: Uint8Array): Promise<number | void>;
}

/** The shortest decimal that reads back to the same double; "-0" for negative zero. */
export function formatExportNumber(v: number): string {
  return Object.is(v, -0) ? "-0" : String(v);
}

async function writeAll(writer: ByteWriter, bytes: Uint8Array): Promise<void> {
  let offset = 0;
  while (offset < bytes.length) {
    const n = await writer.write(offset === 0 ? bytes : bytes.subarray(offset));
    if (typeof n !== "number") return; // stream writers take the whole chunk
    if (n <= 0) throw new Error("the export destination accepted no bytes");
    offset += n;
  }
}

function missingColumn(name: string, dimension: number): never {
  throw new TypeError(`a ${dimension}D export frame needs the '${name}' column`);
}

/**
 * Writes frames in the export format; returns the number of frames and object rows written.
 *
 * @example
 * ```ts
 * const buf: Uint8Array[] = [];
 * await writeFramesCsv([frame], { write: async (c) => void buf.push(c.slice()) }, { dimension: 2 });
 * ```
 */
export async function writeFramesCsv(
  frames: Iterable<ExportFrame> | AsyncIterable<ExportFrame>,
  writer: ByteWriter,
  options: ExportOptions,
): Promise<{ frames: number; rows: number }> {
  const encoder = new TextEncoder();
  const three = options.dimension === 3;
  const columns: readonly string[] = three ? EXPORT_COLUMNS_3D : EXPORT_COLUMNS_2D;
  const lead = options.realisation === undefined ? "" : `${options.realisation},`;
  let head = "";
  for (const c of options.comments ?? []) {
    if (/[\r\n]/.test(c)) {
      throw new RangeError(`an export comment must be one line, got ${JSON.stringify(c)}`);
    }
    head += `# ${c}\n`;
  }
  if (options.header ?? true) {
    head += (options.realisation === undefined ? "" : "realisation,") + columns.join(",") + "\n";
  }
  if (head.length > 0) await writeAll(writer, encoder.encode(head));
  const f = formatExportNumber;
  const emptyTail = ",".repeat(columns.length - 1);
  let frameCount = 0;
  let rows = 0;
  for await (const frame of frames) {
    const { n, id, x, y } = frame;
    const t = f(frame.t);
    const lines: string[] = [];
    if (n === 0) lines.push(`${lead}${t}${emptyTail}`);
    const label = frame.label ?? null;
    if (three) {
      const z = frame.z ?? missingColumn("z", 3);
      const loop = frame.loop ?? missingColumn("loop", 3);
      const marker = frame.marker ?? null;
      let order = 0;
      for (let i = 0; i < n; i++) {
        order = i > 0 && loop[i] === loop[i - 1] ? order + 1 : 0;
        const lab = label === null ? "" : LABEL_NAMES[label[i]] ?? String(label[i]);
        lines.push(
          `${lead}${t},${id[i]},${f(x[i])},${f(y[i])},${f(z[i])},${loop[i]},${order},` +
            `${marker === null ? 0 : marker[i]},${lab}`,
        );
      }
    } else {
      const circulation = frame.circulation ?? missingColumn("circulation", 2);
      for (let i = 0; i < n; i++) {
        const lab = label === null ? "" : LABEL_NAMES[label[i]] ?? String(label[i]);
        lines.push(`${lead}${t},${id[i]},${f(x[i])},${f(y[i])},${f(circulation[i])},${lab}`);
      }
    }
    lines.push("");
    await writeAll(writer, encoder.encode(lines.join("\n")));
    frameCount++;
    rows += n;
  }
  return { frames: frameCount, rows };
}
