/**
 * JSON lines reader (one JSON object per line, streamed line by line).
 *
 * Two line shapes, freely mixed, both sorted by time:
 * - a row: one object per line, `{"t": 0.5, "id": 3, "x": 1.25, "y": -0.5, "circulation": 1}`;
 * - a frame: one record time per line, the time (and realisation) as numbers and every other mapped key an
 *   array with one entry per object, `{"t": 0.5, "id": [3, 4], "x": [1.25, 2], "y": [-0.5, 0], …}`; all arrays
 *   must have the same length (empty arrays: a record time with no objects).
 * Keys are the mapped column names. Blank lines and lines starting with the comment character are skipped.
 *
 * Messages name the file, the line, the key (and array position) and the offending value, e.g.
 * `runs/r3.jsonl:17 key 'x'[4]: got "abc" (a string), expected a number`.
 *
 * @example
 * ```ts
 * await readJsonLines(plan, assembler); // plan from planRead(), assembler a FrameAssembler
 * ```
 */
import { absentHint, fail, listNames, openDataFile } from "./_messages.ts";
import { type FrameAssembler, type RowOrigin, Slot, SLOT_COUNT, type SlotIndex } from "./assemble.ts";
import type { ReadPlan } from "./plan.ts";
import { forEachLine, TextFormatError } from "./text_lines.ts";
import { readOwnRows } from "./_shared_file_index.ts";

/** Row references pack (line, array position + 1) into one exactly represented double. */
const ELEMENT_RADIX = 16777216; // 2^24

class JsonOrigin implements RowOrigin {
  ref = 0;
  readonly #display: string;
  readonly #keys: string[];
  constructor(display: string, keys: string[]) {
    this.#display = display;
    this.#keys = keys;
  }
  describe(ref: number, slot: SlotIndex | null): string {
    const line = Math.floor(ref / ELEMENT_RADIX);
    const element = ref - line * ELEMENT_RADIX - 1;
    const at = element >= 0 ? `[${element}]` : "";
    if (slot === null) return `${this.#display}:${line}${element >= 0 ? ` entry [${element}]` : ""}`;
    return `${this.#display}:${line} key '${this.#keys[slot]}'${slot === Slot.T ? "" : at}`;
  }
}

function kindOf(v: unknown): string {
  if (v === null) return "null";
  if (Array.isArray(v)) return "an array";
  if (typeof v === "string") return "a string";
  if (typeof v === "object") return "an object";
  return `a ${typeof v}`;
}

function entries(n: number): string {
  return `${n} ${n === 1 ? "entry" : "entries"}`;
}

function shownValue(v: unknown): string {
  const s = JSON.stringify(v) ?? String(v);
  return s.length > 40 ? `${s.slice(0, 37)}…` : s;
}

/** Reads the plan's JSON lines file into the assembler. */
export async function readJsonLines(plan: ReadPlan, asm: FrameAssembler): Promise<void> {
  const file = await openDataFile(plan.path, plan.display);
  const keys: string[] = new Array(SLOT_COUNT).fill("");
  const params: string[] = new Array(SLOT_COUNT).fill("");
  const optional: boolean[] = new Array(SLOT_COUNT).fill(false);
  const slots: SlotIndex[] = [];
  for (const col of plan.columns) {
    if (typeof col.ref !== "string") fail(`${col.param}: JSON lines columns are keys (names), not positions`);
    keys[col.slot] = col.ref;
    params[col.slot] = col.param;
    optional[col.slot] = col.optional;
    slots.push(col.slot);
  }
  const filterKey = plan.filter === null ? null : String(plan.filter.ref);
  const origin = new JsonOrigin(plan.display, keys);
  const row = new Float64Array(SLOT_COUNT);
  const arrays: unknown[][] = new Array(SLOT_COUNT).fill(null);

  const missing = (obj: Record<string, unknown>, line: number, slot: SlotIndex): never =>
    fail(
      `${plan.display}:${line}: key '${keys[slot]}' (${params[slot]}) is missing; the object has ` +
        `${listNames(Object.keys(obj))}${absentHint(params[slot], optional[slot])}`,
    );

  const number = (v: unknown, ref: number, slot: SlotIndex): number => {
    if (typeof v !== "number") {
      const kind = v === null ? "" : ` (${kindOf(v)})`;
      fail(`${origin.describe(ref, slot)}: got ${shownValue(v)}${kind}, expected a number`);
    }
    return v;
  };

  const onLine = (text: string, line: number): boolean => {
    if (text.length === 0 || text.trim().length === 0) return true;
    if (plan.comment !== null && text.startsWith(plan.comment)) return true;
    let obj: unknown;
    try {
      obj = JSON.parse(text);
    } catch (e) {
      const hint = /\b(NaN|-?Infinity)\b/.test(text)
        ? "; JSON has no NaN or Infinity, and the values must be finite numbers"
        : "";
      fail(`${plan.display}:${line}: not valid JSON (${(e as Error).message})${hint}`);
    }
    if (typeof obj !== "object" || obj === null || Array.isArray(obj)) {
      fail(`${plan.display}:${line}: expected one JSON object per line, got ${kindOf(obj)}`);
    }
    const o = obj as Record<string, unknown>;
    const lineRef = line * ELEMENT_RADIX;
    if (filterKey !== null) {
      const v = o[filterKey];
      if (v === undefined) {
        fail(`${plan.display}:${line}: key '${filterKey}' (${plan.filter!.param}) is missing`);
      }
      if (typeof v !== "number" || !Number.isInteger(v)) {
        const got = shownValue(v);
        fail(
          `${plan.display}:${line} key '${filterKey}': got ${got}, expected an integer realisation number`,
        );
      }
      if (v !== plan.filter!.value) return true;
    }
    const tValue = o[keys[Slot.T]];
    if (tValue === undefined) missing(o, line, Slot.T);
    origin.ref = lineRef;
    const t = number(tValue, lineRef, Slot.T);
    const xValue = o[keys[Slot.X]];
    if (!Array.isArray(xValue)) {
      row[Slot.T] = t;
      for (let j = 0; j < slots.length; j++) {
        const s = slots[j];
        if (s === Slot.T) continue;
        const v = o[keys[s]];
        if (v === undefined) missing(o, line, s);
        row[s] = number(v, lineRef, s);
      }
      return asm.row(row, origin);
    }
    // A frame line: arrays of equal length.
    let n = -1;
    let first = Slot.X as SlotIndex;
    for (let j = 0; j < slots.length; j++) {
      const s = slots[j];
      if (s === Slot.T) continue;
      const v = o[keys[s]];
      if (v === undefined) missing(o, line, s);
      if (!Array.isArray(v)) {
        const got = `${shownValue(v)} (${kindOf(v)})`;
        const why = `key '${keys[Slot.X]}' is an array, so this line lists a whole frame`;
        fail(`${plan.display}:${line} key '${keys[s]}': got ${got}, expected an array (${why})`);
      }
      if (n < 0) {
        n = v.length;
        first = s;
      } else if (v.length !== n) {
        const other = `key '${keys[first]}' has ${entries(n)}`;
        fail(
          `${plan.display}:${line} key '${keys[s]}': the array has ${entries(v.length)}, ${other} (unequal ` +
            "point counts: every array of a frame line has one entry per object)",
        );
      }
      arrays[s] = v;
    }
    if (n === 0) return asm.emptyRow(t, origin);
    if (n >= ELEMENT_RADIX - 1) fail(`${plan.display}:${line}: a frame line with ${n} objects is too long`);
    row[Slot.T] = t;
    for (let i = 0; i < n; i++) {
      const ref = lineRef + i + 1;
      origin.ref = ref;
      for (let j = 0; j < slots.length; j++) {
        const s = slots[j];
        if (s === Slot.T) continue;
        row[s] = number(arrays[s][i], ref, s);
      }
      if (!asm.row(row, origin)) return false;
    }
    return true;
  };

  try {
    // One file holding every realisation: read only this realisation's lines (see _shared_file_index.ts).
    await readOwnRows(plan, file, async (source, start) => {
      let more = true;
      await forEachLine(source, (text, line) => (more = onLine(text, line) !== false), start);
      return more;
    });
  } catch (e) {
    if (e instanceof TextFormatError) fail(`${plan.display}: ${e.message}`);
    throw e;
  } finally {
    file.close();
  }
}
