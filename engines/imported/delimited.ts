/**
 * Delimited text records (CSV, TSV, whitespace-separated), streamed record by record.
 *
 * Method: RFC 4180 field splitting — a field that starts with a double quote runs to the matching closing
 * quote, `""` inside it stands for one quote, and it may contain delimiters and line breaks (the record then
 * continues on the next line). Lines without a quote take a fast path (`String.prototype.split`). Blank lines
 * and lines starting with the comment character are skipped. The "whitespace" delimiter splits on runs of
 * spaces and tabs and has no quoting.
 *
 * References: Y. Shafranovich, "Common Format and MIME Type for Comma-Separated Values (CSV) Files",
 * RFC 4180 (2005), doi:10.17487/RFC4180.
 *
 * @example
 * ```ts
 * splitRecord('1,"a, ""b""",3', ","); // ["1", 'a, "b"', "3"]
 * using file = await Deno.open("tracks.csv");
 * await forEachRecord(file, { delimiter: ",", comment: "#" }, (fields, line) => {
 *   console.log(line, fields);
 * });
 * ```
 */
import { type ByteSource, forEachLine, type LineOptions, TextFormatError } from "./text_lines.ts";

/** A field delimiter character, or "whitespace" (runs of spaces and tabs). */
export type RecordDelimiter = string;

/** Thrown for text that is not a well-formed record; `line` is the record's first line (0 if unknown). */
export class RecordFormatError extends Error {
  readonly line: number;
  constructor(message: string, line: number) {
    super(message);
    this.name = "RecordFormatError";
    this.line = line;
  }
}

const QUOTE = 34;
const WHITESPACE = /[ \t]+/;

/**
 * Splits one record into fields. Returns `null` when a quoted field is still open at the end of `text` (the
 * record continues on the next line). Throws `RecordFormatError` (line 0) for text after a closing quote.
 */
export function splitRecord(text: string, delimiter: RecordDelimiter): string[] | null {
  if (delimiter === "whitespace") return text.trim().split(WHITESPACE);
  if (text.indexOf('"') < 0) return text.split(delimiter);
  const out: string[] = [];
  const n = text.length;
  let i = 0;
  for (;;) {
    if (i < n && text.charCodeAt(i) === QUOTE) {
      let field = "";
      let j = i + 1;
      for (;;) {
        const q = text.indexOf('"', j);
        if (q < 0) return null;
        if (q + 1 < n && text.charCodeAt(q + 1) === QUOTE) {
          field += text.slice(j, q + 1);
          j = q + 2;
          continue;
        }
        field += text.slice(j, q);
        i = q + 1;
        break;
      }
      out.push(field);
      if (i === n) return out;
      if (text.startsWith(delimiter, i)) {
        i += delimiter.length;
        continue;
      }
      throw new RecordFormatError(
        `field ${out.length} has text after its closing quote (${JSON.stringify(text.slice(i, i + 12))}); ` +
          'inside a quoted field write a quote as ""',
        0,
      );
    }
    const d = text.indexOf(delimiter, i);
    if (d < 0) {
      out.push(text.slice(i));
      return out;
    }
    out.push(text.slice(i, d));
    i = d + delimiter.length;
  }
}

function isBlank(line: string): boolean {
  if (line.length === 0) return true;
  const c = line.charCodeAt(0);
  if (c !== 32 && c !== 9) return false;
  return line.trim().length === 0;
}

export interface RecordOptions extends LineOptions {
  readonly delimiter: RecordDelimiter;
  /** Lines starting with this character are skipped; null: no comments. */
  readonly comment: string | null;
}

/**
 * Streams the records of a delimited text file: `onRecord(fields, line, byteOffset)` with the 1-based line
 * where the record starts and (with `options.offsets`) the byte offset of that line. Stops early when
 * `onRecord` returns false. Throws `RecordFormatError` for malformed quoting and `TextFormatError` for bytes
 * that are not UTF-8.
 */
export async function forEachRecord(
  source: ByteSource,
  options: RecordOptions,
  onRecord: (fields: string[], line: number, byteOffset: number) => boolean | void,
): Promise<void> {
  const { delimiter, comment } = options;
  let pending: string | null = null;
  let pendingLine = 0;
  let pendingByte = -1;
  let stopped = false;
  const split = (text: string, line: number): string[] | null => {
    try {
      return splitRecord(text, delimiter);
    } catch (e) {
      if (e instanceof RecordFormatError) throw new RecordFormatError(e.message, line);
      throw e;
    }
  };
  await forEachLine(source, (line, lineNumber, byteOffset) => {
    if (pending === null) {
      if (isBlank(line)) return true;
      if (comment !== null && line.startsWith(comment)) return true;
      const fields = split(line, lineNumber);
      if (fields === null) {
        pending = line;
        pendingLine = lineNumber;
        pendingByte = byteOffset;
        return true;
      }
      if (onRecord(fields, lineNumber, byteOffset) === false) {
        stopped = true;
        return false;
      }
      return true;
    }
    pending += "\n" + line;
    const fields = split(pending, pendingLine);
    if (fields === null) return true;
    pending = null;
    if (onRecord(fields, pendingLine, pendingByte) === false) {
      stopped = true;
      return false;
    }
    return true;
  }, options);
  if (!stopped && pending !== null) {
    throw new RecordFormatError(`a quoted field opened on line ${pendingLine} is never closed`, pendingLine);
  }
}

export { TextFormatError };
