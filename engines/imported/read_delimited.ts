/**
 * CSV/TSV reader: streams records from the file (see `delimited.ts`), finds the mapped columns in the header
 * (or by position), keeps the rows of this realisation and hands their numbers to the assembler.
 *
 * Layout: one row per object per record time, rows sorted by time; a header line names the columns (unless
 * `source.header: false`). A row whose mapped fields are all empty except the time marks a record time with
 * no objects (the exporter writes such rows for empty frames).
 *
 * Messages name the file, the line, the column and the offending text, e.g.
 * `runs/r3.csv:17 column 'x': got 'abc', expected a number`.
 *
 * @example
 * ```ts
 * await readDelimited(plan, assembler); // plan from planRead(), assembler a FrameAssembler
 * ```
 */
import { absentHint, didYouMean, fail, listNames, openDataFile } from "./_messages.ts";
import { type FrameAssembler, type RowOrigin, Slot, SLOT_COUNT, type SlotIndex } from "./assemble.ts";
import { forEachRecord, RecordFormatError, TextFormatError } from "./delimited.ts";
import { readOwnRows } from "./_shared_file_index.ts";
import type { ReadPlan } from "./plan.ts";

const NAN_TEXT = /^\s*[+-]?nan\s*$/i;

/**
 * True when `text` is not a number. `v` is `Number(text)`; NaN spelled out ("NaN", "nan") counts as a number
 * here (the assembler then reports it as not finite), an empty or blank field does not.
 */
export function notANumber(text: string, v: number): boolean {
  return Number.isNaN(v) ? !NAN_TEXT.test(text) : v === 0 && text.trim().length === 0;
}

/** The failure for a field that is not a number. */
export function badNumber(where: string, text: string): never {
  const what = text.length === 0 ? " (an empty field)" : text.trim().length === 0 ? " (blank)" : "";
  fail(`${where}: got '${text}'${what}, expected a number`);
}

class DelimitedOrigin implements RowOrigin {
  ref = 0;
  readonly #display: string;
  readonly #labels: string[];
  constructor(display: string, labels: string[]) {
    this.#display = display;
    this.#labels = labels;
  }
  describe(ref: number, slot: SlotIndex | null): string {
    return slot === null
      ? `${this.#display}:${ref}`
      : `${this.#display}:${ref} column '${this.#labels[slot]}'`;
  }
}

/** Reads the plan's CSV/TSV file into the assembler. */
export async function readDelimited(plan: ReadPlan, asm: FrameAssembler): Promise<void> {
  const file = await openDataFile(plan.path, plan.display);
  const index = new Int32Array(SLOT_COUNT).fill(-1);
  const labels: string[] = new Array(SLOT_COUNT).fill("");
  const slots: SlotIndex[] = [];
  let filterIndex = -1;
  let filterLabel = "";
  let fieldCount = -1;
  const origin = new DelimitedOrigin(plan.display, labels);
  const row = new Float64Array(SLOT_COUNT);

  const resolve = (header: string[] | null, line: number) => {
    const names = header === null ? [] : header.map((h) => h.trim());
    const find = (ref: string | number, param: string, optional = false): number => {
      if (typeof ref === "number") {
        if (ref > fieldCount) {
          fail(
            `${plan.display}:${line}: ${param} is column ${ref}, but the rows have only ${fieldCount} field` +
              `${fieldCount === 1 ? "" : "s"}`,
          );
        }
        return ref - 1;
      }
      const at = names.indexOf(ref);
      if (at < 0) {
        const hint = didYouMean(ref, names);
        fail(
          `${plan.display}:${line} header: no column '${ref}' (${param})${hint}; the header has ` +
            `${listNames(names)}${absentHint(param, optional)}`,
        );
      }
      if (names.indexOf(ref, at + 1) >= 0) {
        fail(`${plan.display}:${line} header: column '${ref}' (${param}) appears twice; rename one of them`);
      }
      return at;
    };
    for (const col of plan.columns) {
      index[col.slot] = find(col.ref, col.param, col.optional);
      labels[col.slot] = typeof col.ref === "number" ? `#${col.ref}` : col.ref;
      slots.push(col.slot);
    }
    if (plan.filter !== null) {
      filterIndex = find(plan.filter.ref, plan.filter.param);
      filterLabel = typeof plan.filter.ref === "number" ? `#${plan.filter.ref}` : plan.filter.ref;
    }
  };

  let resolved = false;
  let stopped = false;
  const onRecord = (fields: string[], line: number): boolean => {
    if (!resolved) {
      fieldCount = fields.length;
      resolve(plan.header ? fields : null, line);
      resolved = true;
      if (plan.header) return true;
    }
    if (fields.length !== fieldCount) {
      const count = `${fields.length} field${fields.length === 1 ? "" : "s"}`;
      const reference = plan.header ? "as in the header" : "as in the first row";
      fail(
        `${plan.display}:${line}: the row has ${count}, expected ${fieldCount} (${reference}); unequal ` +
          "field counts mean a missing or extra delimiter",
      );
    }
    origin.ref = line;
    if (filterIndex >= 0) {
      const text = fields[filterIndex];
      const v = Number(text);
      if (text.trim().length === 0 || !Number.isInteger(v)) {
        fail(
          `${plan.display}:${line} column '${filterLabel}': got '${text}', expected an integer realisation ` +
            `number (${plan.filter!.param})`,
        );
      }
      if (v !== plan.filter!.value) return true;
    }
    let blank = true;
    for (let j = 0; j < slots.length; j++) {
      const s = slots[j];
      if (s !== Slot.T && fields[index[s]].length > 0) {
        blank = false;
        break;
      }
    }
    for (let j = 0; j < slots.length; j++) {
      const s = slots[j];
      if (blank && s !== Slot.T) continue;
      const text = fields[index[s]];
      const v = Number(text);
      if (notANumber(text, v)) badNumber(origin.describe(line, s), text);
      row[s] = v;
    }
    return blank ? asm.emptyRow(row[Slot.T], origin) : asm.row(row, origin);
  };
  try {
    // One file holding every realisation: read only this realisation's rows (see _shared_file_index.ts).
    await readOwnRows(plan, file, async (source, start) => {
      await forEachRecord(
        source,
        { delimiter: plan.delimiter, comment: plan.comment, ...start },
        (f, line) => {
          if (onRecord(f, line) !== false) return true;
          stopped = true;
          return false;
        },
      );
      return !stopped;
    });
  } catch (e) {
    if (e instanceof RecordFormatError) fail(`${plan.display}:${e.line}: ${e.message}`);
    if (e instanceof TextFormatError) fail(`${plan.display}: ${e.message}`);
    throw e;
  } finally {
    file.close();
  }
  if (!resolved && plan.header) fail(`${plan.display}: the file is empty (no header line)`);
}
