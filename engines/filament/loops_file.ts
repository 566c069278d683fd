/**
 * Reading closed filament loops from a file, for `initial: { kind: loops, file }`.
 *
 * Formats (chosen by extension):
 * - `.json`: `{"loops": [[[x, y, z], …], …]}` or a bare array of loops; each loop is an ordered list of points.
 * - `.csv`: rows `loop,x,y,z` (an optional header row is skipped); rows of one loop are consecutive and in
 *   order along the line; loop labels may be any text.
 * Every loop needs at least 3 points; every coordinate must be a finite number. Problems are reported as
 * `LoopsFileError` with the file name and the row or loop index.
 *
 * @example
 * ```ts
 * import { parseLoopsText } from "./loops_file.ts";
 * const loops = parseLoopsText("l.csv", "loop,x,y,z\na,1,0,0\na,0,1,0\na,-1,0,0\n");
 * ```
 */
import type { Loop } from "./initial.ts";

/** A loops file that cannot be used; the message names the file and the place. */
export class LoopsFileError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "LoopsFileError";
  }
}

/** Parses the text of a loops file (format from the name's extension). */
export function parseLoopsText(name: string, text: string): Loop[] {
  const lower = name.toLowerCase();
  if (lower.endsWith(".json")) return parseJson(name, text);
  if (lower.endsWith(".csv")) return parseCsv(name, text);
  throw new LoopsFileError(`${name}: unknown loops file format (use .json or .csv)`);
}

/** Reads and parses a loops file. */
export async function readLoopsFile(path: string): Promise<Loop[]> {
  let text: string;
  try {
    text = await Deno.readTextFile(path);
  } catch (e) {
    throw new LoopsFileError(
      `${path}: cannot read loops file (${e instanceof Error ? e.message : String(e)})`,
    );
  }
  return parseLoopsText(path, text);
}

function parseJson(name: string, text: string): Loop[] {
  let data: unknown;
  try {
    data = JSON.parse(text);
  } catch (e) {
    throw new LoopsFileError(`${name}: invalid JSON (${e instanceof Error ? e.message : String(e)})`);
  }
  const raw = Array.isArray(data) ? data : (data as { loops?: unknown })?.loops;
  if (!Array.isArray(raw) || raw.length === 0) {
    throw new LoopsFileError(
      `${name}: expected {"loops": [...]} or an array of loops, with at least one loop`,
    );
  }
  return raw.map((loop, k) => {
    if (!Array.isArray(loop) || loop.length < 3) {
      throw new LoopsFileError(`${name}: loop ${k} must be an array of at least 3 points`);
    }
    return loop.map((p, q) => {
      if (
        !Array.isArray(p) || p.length !== 3 || !p.every((v) => typeof v === "number" && Number.isFinite(v))
      ) {
        throw new LoopsFileError(`${name}: loop ${k}, point ${q} must be [x, y, z] with finite numbers`);
      }
      return [p[0], p[1], p[2]] as [number, number, number];
    });
  });
}

function parseCsv(name: string, text: string): Loop[] {
  const loops: Loop[] = [];
  let label: string | null = null;
  const lines = text.split(/\r?\n/);
  for (let r = 0; r < lines.length; r++) {
    const line = lines[r].trim();
    if (line === "") continue;
    const cells = line.split(",").map((c) => c.trim());
    if (cells.length !== 4) throw new LoopsFileError(`${name}:${r + 1}: expected 4 columns loop,x,y,z`);
    const v = cells.slice(1).map(Number);
    if (!v.every(Number.isFinite)) {
      if (loops.length === 0 && label === null) continue; // header row
      throw new LoopsFileError(`${name}:${r + 1}: x, y, z must be finite numbers`);
    }
    if (cells[0] !== label) {
      label = cells[0];
      loops.push([]);
    }
    loops[loops.length - 1].push([v[0], v[1], v[2]]);
  }
  if (loops.length === 0) throw new LoopsFileError(`${name}: no loops found`);
  loops.forEach((l, k) => {
    if (l.length < 3) {
      throw new LoopsFileError(`${name}: loop ${k} has ${l.length} points (at least 3 needed)`);
    }
  });
  return loops;
}
