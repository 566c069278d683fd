/**
 * Compact, bit-exact encoding of one frame as a BLOB: named little-endian arrays packed one after another,
 * each of length n. The layout string (stored beside the blob) lists them, e.g.
 * `id:i32,x:f64,y:f64,circulation:f64,label:u8`. Float64 arrays are stored exactly, so a frame decodes to the
 * same bits that the engine produced.
 *
 * @example
 * ```ts
 * const enc = encodeFrame(3, { id: new Int32Array([1, 2, 3]), x: new Float64Array(3) });
 * const dec = decodeFrame(enc.layout, enc.data, 3); // dec.x is a Float64Array of length 3
 * ```
 */

export type ColumnType = "i32" | "f64" | "u8";
export type Column = Int32Array | Float64Array | Uint8Array;

const BYTES: Record<ColumnType, number> = { i32: 4, f64: 8, u8: 1 };

function typeOf(a: Column): ColumnType {
  if (a instanceof Float64Array) return "f64";
  if (a instanceof Int32Array) return "i32";
  return "u8";
}

export interface EncodedFrame {
  readonly layout: string;
  readonly data: Uint8Array;
}

/** Packs the first n entries of each named column (in the object's key order). */
export function encodeFrame(n: number, columns: Readonly<Record<string, Column>>): EncodedFrame {
  const names = Object.keys(columns);
  let size = 0;
  for (const name of names) size += BYTES[typeOf(columns[name])] * n;
  // f64 columns first would keep alignment; we copy bytes instead, so any order works.
  const data = new Uint8Array(size);
  const parts: string[] = [];
  let offset = 0;
  for (const name of names) {
    const col = columns[name];
    const type = typeOf(col);
    const bytes = BYTES[type] * n;
    if (col.length < n) throw new RangeError(`frame column ${name} has ${col.length} entries, needs ${n}`);
    data.set(new Uint8Array(col.buffer, col.byteOffset, bytes), offset);
    offset += bytes;
    parts.push(`${name}:${type}`);
  }
  return { layout: parts.join(","), data };
}

/** Unpacks a frame BLOB into fresh, aligned typed arrays keyed by column name. */
export function decodeFrame(layout: string, data: Uint8Array, n: number): Record<string, Column> {
  const out: Record<string, Column> = {};
  let offset = 0;
  for (const part of layout.split(",")) {
    const [name, type] = part.split(":") as [string, ColumnType];
    const width = BYTES[type];
    if (width === undefined) throw new Error(`unknown column type '${type}' in frame layout '${layout}'`);
    const bytes = width * n;
    if (offset + bytes > data.byteLength) {
      throw new Error(`frame blob is ${data.byteLength} bytes, layout '${layout}' with n=${n} needs more`);
    }
    const copy = data.slice(offset, offset + bytes);
    out[name] = type === "f64"
      ? new Float64Array(copy.buffer, 0, n)
      : type === "i32"
      ? new Int32Array(copy.buffer, 0, n)
      : new Uint8Array(copy.buffer, 0, n);
    offset += bytes;
  }
  if (offset !== data.byteLength) {
    throw new Error(
      `frame blob is ${data.byteLength} bytes but layout '${layout}' with n=${n} uses ${offset}`,
    );
  }
  return out;
}
