/**
 * One file holding every realisation (`source.file` with `source.realisationColumn`): instead of reading and
 * parsing the whole file once per realisation, the first realisation a worker reads builds an index — for each
 * realisation value, the byte ranges of its consecutive rows (and the header's) — and every realisation then
 * reads only its own ranges. The index is kept per worker, for the file as it was (path, size and modification
 * time; a changed file is indexed again).
 *
 * The index pass only looks at the realisation column. Anything unusual there (a missing column, a value that
 * is not an integer, a row with too few fields) gives no index: the reader then streams the whole file as
 * before and reports the problem with its line. Files whose realisations are interleaved row by row would need
 * a range per row; past `MAX_RANGES` ranges no index is kept either.
 */
import { forEachRecord } from "./delimited.ts";
import type { ReadPlan } from "./plan.ts";
import { type ByteSource, forEachLine } from "./text_lines.ts";

/** Bytes [start, end) of the file, starting at line `line`. */
export interface ByteRange {
  readonly start: number;
  end: number;
  readonly line: number;
}

export interface SharedFileIndex {
  /** The header line (delimited files with a header), read before any realisation's rows. */
  readonly header: ByteRange | null;
  /** Realisation value → its ranges, in file order. */
  readonly ranges: ReadonlyMap<number, readonly ByteRange[]>;
}

/** Most ranges an index may hold (a few MB of memory). */
export const MAX_RANGES = 100_000;
const CACHE_SIZE = 4;
const cache = new Map<string, Promise<SharedFileIndex | null>>();

/** A byte source that reads [start, end) of an open file. */
export function rangeSource(file: Deno.FsFile, range: ByteRange): ByteSource {
  let pos = range.start;
  return {
    async read(p: Uint8Array): Promise<number | null> {
      if (pos >= range.end) return null;
      await file.seek(pos, Deno.SeekMode.Start);
      const n = await file.read(p.subarray(0, Math.min(p.length, range.end - pos)));
      if (n === null) return null;
      pos += n;
      return n;
    },
  };
}

/** The index of the plan's file (built on first use in this worker), or null when the file does not suit one. */
export async function sharedFileIndex(plan: ReadPlan): Promise<SharedFileIndex | null> {
  if (plan.filter === null || plan.format === "hdf5") return null;
  let info: Deno.FileInfo;
  try {
    info = await Deno.stat(plan.path);
  } catch {
    return null;
  }
  const key = JSON.stringify([
    plan.path,
    info.size,
    info.mtime?.getTime() ?? 0,
    plan.format,
    plan.delimiter,
    plan.comment,
    plan.header,
    plan.filter.ref,
  ]);
  let entry = cache.get(key);
  if (entry === undefined) {
    entry = build(plan, info.size).catch(() => null);
    cache.set(key, entry);
    while (cache.size > CACHE_SIZE) cache.delete(cache.keys().next().value!);
  }
  return await entry;
}

/** Thrown inside the index pass to give up (the reader then streams the file). */
class NoIndex extends Error {}

/**
 * Feeds `source` to `read` whole, or — when the plan's file has an index — only its header and the ranges of the
 * plan's realisation, each with its first line number and byte offset. `read` returns false when it stopped
 * early; nothing more is read then.
 */
export async function readOwnRows(
  plan: ReadPlan,
  file: Deno.FsFile,
  read: (source: ByteSource, start: { firstLine: number; firstByte: number }) => Promise<boolean>,
): Promise<void> {
  const index = plan.filter === null ? null : await sharedFileIndex(plan);
  if (index === null) {
    await read(file, { firstLine: 1, firstByte: 0 });
    return;
  }
  const own = index.ranges.get(plan.filter!.value) ?? [];
  for (const r of index.header === null ? own : [index.header, ...own]) {
    if (!(await read(rangeSource(file, r), { firstLine: r.line, firstByte: r.start }))) return;
  }
}

async function build(plan: ReadPlan, size: number): Promise<SharedFileIndex | null> {
  const filter = plan.filter!;
  const ranges = new Map<number, ByteRange[]>();
  let header: ByteRange | null = null;
  let current: ByteRange | null = null;
  let currentValue = Number.NaN;
  let count = 0;
  const row = (value: unknown, line: number, byte: number) => {
    if (header !== null && header.end < 0) header.end = byte;
    if (typeof value !== "number" || !Number.isInteger(value)) throw new NoIndex();
    if (current !== null && value === currentValue) return;
    if (current !== null) current.end = byte;
    if (++count > MAX_RANGES) throw new NoIndex();
    current = { start: byte, end: -1, line };
    currentValue = value;
    const list = ranges.get(value);
    if (list) list.push(current);
    else ranges.set(value, [current]);
  };
  const file = await Deno.open(plan.path, { read: true });
  try {
    if (plan.format === "jsonl") {
      const key = String(filter.ref);
      await forEachLine(file, (text, line, byte) => {
        const trimmed = text.trim();
        if (trimmed.length === 0 || (plan.comment !== null && trimmed.startsWith(plan.comment))) return;
        const obj = JSON.parse(trimmed);
        row(typeof obj === "object" && obj !== null ? obj[key] : undefined, line, byte);
      }, { offsets: true });
    } else {
      let column = -1;
      let fields0 = -1;
      await forEachRecord(
        file,
        { delimiter: plan.delimiter, comment: plan.comment, offsets: true },
        (f, line, byte) => {
          if (column < 0) {
            fields0 = f.length;
            if (plan.header) {
              column = typeof filter.ref === "number"
                ? filter.ref - 1
                : f.map((h) => h.trim()).indexOf(filter.ref);
              if (column < 0) throw new NoIndex();
              header = { start: 0, end: -1, line: 1 };
              return;
            }
            column = typeof filter.ref === "number" ? filter.ref - 1 : -1;
            if (column < 0) throw new NoIndex();
          }
          if (
            f.length !== fields0 || column >= f.length || f[column].trim().length === 0
          ) throw new NoIndex();
          row(Number(f[column]), line, byte);
        },
      );
    }
  } catch {
    // NoIndex, or a problem the reader will report with its line when it streams the file.
    return null;
  } finally {
    file.close();
  }
  const last = current as ByteRange | null;
  if (last !== null) last.end = size;
  const head = header as ByteRange | null;
  if (head !== null && head.end < 0) head.end = size;
  return { header: head, ranges };
}
