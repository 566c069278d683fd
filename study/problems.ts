/**
 * Problems found in a study file, as data: where (file, line, column, field path), what was written, and
 * what is allowed. The loader collects all of them; `formatProblems` prints one line per problem:
 *
 * ```
 * film.yaml:12:10  parameters.initial.count: got -4; must be an integer ≥ 1
 * film.yaml:3:1  paramters: unknown key; did you mean "parameters"?
 * ```
 *
 * Also here: the message catalogue for zod issues, "did you mean" suggestions (edit distance), and the map
 * from a field path to a line and column of the YAML text.
 *
 * @example
 * ```ts
 * const loaded = parseStudyText(text, "film.yaml");
 * if (!loaded.ok) console.error(formatProblems(loaded.problems));
 * ```
 */
import { editDistance } from "../engines/_edit_distance.ts";
export { editDistance };
import type { z } from "zod";
import {
  type Document,
  isAlias,
  isCollection,
  isMap,
  isScalar,
  isSeq,
  type LineCounter,
  type Node,
} from "yaml";
import { describeAllowed } from "./_schema_walk.ts";

/** Kinds of problems (stable identifiers, for tests and tools). */
export type ProblemCode =
  /** The file cannot be read (missing, a folder, no permission). */
  | "file-unreadable"
  /** The file is not UTF-8 text (line and column of the first byte that is not). */
  | "not-utf8"
  /** YAML syntax error (bad indentation, unclosed bracket or quote, tab indentation, several documents, …). */
  | "yaml-syntax"
  /** The same key twice in one map. */
  | "duplicate-key"
  /** An alias (`*name`) without an anchor, a YAML tag that is not understood, or too many aliases. */
  | "yaml-reference"
  /** Nothing in the file, or the top level is not a map. */
  | "not-a-study"
  /** A required field is missing. */
  | "missing"
  /** A value of the wrong kind (text for a number, a list for a map, a fraction for an integer, …). */
  | "wrong-type"
  /** A number, list length or text length outside its allowed range. */
  | "out-of-range"
  /** A value that is not one of the allowed choices. */
  | "not-allowed"
  /** A text that does not have the required form. */
  | "bad-format"
  /** A key that the schema does not know. */
  | "unknown-key"
  /** An engine id that is not registered. */
  | "unknown-engine"
  /** A rule tying several fields together (e.g. sample interval ≤ duration, odd count with zero polarity). */
  | "rule"
  /** A sweep path that does not name an engine parameter. */
  | "sweep-path"
  /** A swept value that the engine's schema refuses at that parameter point. */
  | "sweep-value"
  /** A sweep that produces identical parameter points or too many of them. */
  | "sweep-points"
  /** A defect of the checker itself (reported instead of crashing). */
  | "internal"
  /** A warning, not an error: an earlier spelling that is still accepted (say what to write instead). */
  | "deprecated";

/** One problem in a study file. */
export interface StudyProblem {
  /** The file as named by the caller. */
  readonly file: string;
  /** 1-based line; 0 when the problem concerns the file as a whole (e.g. it cannot be read). */
  readonly line: number;
  /** 1-based column; 0 with line 0. */
  readonly column: number;
  /** Field path, e.g. `parameters.initial.count`, `sweep.grid["initial.count"][2]`; "" for the whole file. */
  readonly path: string;
  /** The offending value as written in the file (one line, shortened), when there is one. */
  readonly value?: string;
  /** What is allowed, or how to fix it. */
  readonly message: string;
  readonly code: ProblemCode;
}

/**
 * One line per problem: `file:line:column  path: got VALUE; MESSAGE` (without "got" when there is no value,
 * without line and column for whole-file problems).
 */
export function formatProblems(problems: readonly StudyProblem[]): string {
  return problems.map(formatProblem).join("\n");
}

function formatProblem(p: StudyProblem): string {
  const where = p.line > 0 ? `${p.file}:${p.line}:${p.column}` : p.file;
  const path = p.path === "" ? "(whole file)" : p.path;
  const got = p.value !== undefined ? `got ${p.value}; ` : "";
  return `${where}  ${path}: ${got}${p.message}`;
}

/** Orders problems by line, then column (whole-file problems first), keeping the order of equal places. */
export function sortProblems(problems: readonly StudyProblem[]): StudyProblem[] {
  return problems.map((p, i) => ({ p, i }))
    .sort((a, b) => a.p.line - b.p.line || a.p.column - b.p.column || a.i - b.i)
    .map((x) => x.p);
}

const PLAIN_KEY = /^[A-Za-z_][A-Za-z0-9_-]*$/;

/** Field path as text: `run.duration`, `sweep.zip[0]`, `sweep.grid["initial.count"][2]`. */
export function formatPath(path: readonly PropertyKey[]): string {
  let out = "";
  for (const seg of path) {
    if (typeof seg === "number") out += `[${seg}]`;
    else {
      const s = String(seg);
      if (PLAIN_KEY.test(s)) out += out === "" ? s : `.${s}`;
      else out += `[${JSON.stringify(s)}]`;
    }
  }
  return out;
}

/**
 * The candidate closest to `word` when it is close enough to be a likely typo (case ignored; at most one edit
 * for words up to 4 characters, two up to 8, three beyond), else undefined.
 */
export function suggest(word: string, candidates: readonly string[]): string | undefined {
  const w = word.toLowerCase();
  const limit = w.length <= 4 ? 1 : w.length <= 8 ? 2 : 3;
  let best: string | undefined;
  let bestD = Infinity;
  for (const c of candidates) {
    const d = editDistance(w, c.toLowerCase());
    if (d < bestD) {
      best = c;
      bestD = d;
    }
  }
  return best !== undefined && bestD <= limit && bestD < w.length ? best : undefined;
}

/** Where a field path points in the YAML text. */
export interface SourceLocation {
  readonly line: number;
  readonly column: number;
  /** True when the whole path exists in the file; false when it fell back to the nearest existing parent. */
  readonly exact: boolean;
  /** The value at the path as written (one line, shortened), when the path exists. */
  readonly value?: string;
}

const MAX_SHOWN = 60;

/** Maps field paths to line:column in a parsed YAML document and shows values as written. */
export class YamlLocator {
  readonly #text: string;
  readonly #doc: Document;
  readonly #lines: LineCounter;

  constructor(text: string, doc: Document, lineCounter: LineCounter) {
    this.#text = text;
    this.#doc = doc;
    this.#lines = lineCounter;
  }

  /** Line and column (1-based) of a character offset. */
  position(offset: number): { line: number; column: number } {
    const { line, col } = this.#lines.linePos(Math.max(0, Math.min(offset, this.#text.length)));
    return { line, column: col };
  }

  /**
   * Location of `path`: the start of its value, or of its key when `key` is set. A path that does not exist
   * points at the key of its nearest existing parent (the place where the missing key belongs).
   */
  locate(path: readonly PropertyKey[], opts: { key?: boolean } = {}): SourceLocation {
    let node: unknown = this.#doc.contents;
    let keyNode: Node | null = null;
    let depth = 0;
    for (const seg of path) {
      if (isAlias(node)) node = node.resolve(this.#doc) ?? null;
      let next: unknown = undefined;
      if (isMap(node)) {
        const pair = node.items.findLast((p) => keyText(p.key) === String(seg)); // last wins, as in toJS
        if (pair) {
          keyNode = isScalar(pair.key) || isCollection(pair.key) ? pair.key as Node : null;
          next = pair.value ?? null;
          if (next === null) {
            depth++;
            node = null;
            break;
          }
        }
      } else if (isSeq(node) && typeof seg === "number") {
        next = node.items[seg];
        if (next !== undefined) keyNode = null;
      }
      if (next === undefined) break;
      node = next;
      depth++;
    }
    const exact = depth === path.length;
    const valueNode = exact && isNode(node) ? node : null;
    const anchorNode = exact && opts.key && keyNode ? keyNode : (keyNode ?? (isNode(node) ? node : null));
    const start = exact && !opts.key && valueNode?.range ? valueNode.range[0] : anchorNode?.range?.[0] ?? 0;
    const pos = this.position(start);
    if (!exact) return { ...pos, exact };
    return { ...pos, exact, value: valueNode ? this.show(valueNode) : "nothing" };
  }

  /** A node as written: scalars and flow collections verbatim (one line, shortened), block collections named. */
  show(node: Node): string {
    const r = node.range;
    if (isCollection(node) && !node.flow) {
      return isMap(node)
        ? "a map"
        : `a list of ${node.items.length} item${node.items.length === 1 ? "" : "s"}`;
    }
    if (!r) return "a value";
    const block = isScalar(node) && (node.type === "BLOCK_LITERAL" || node.type === "BLOCK_FOLDED");
    const raw = block ? String(node.value).trim() : this.#text.slice(r[0], r[1]).trim();
    if (raw === "") return "nothing";
    const firstLine = raw.split("\n")[0].replace(/\s+/g, " ");
    const text = firstLine.length > MAX_SHOWN ? firstLine.slice(0, MAX_SHOWN - 1) + "…" : firstLine;
    return firstLine !== raw.replace(/\s+/g, " ") && !text.endsWith("…") ? text + " …" : text;
  }
}

function keyText(key: unknown): string | undefined {
  if (isScalar(key)) return String(key.value);
  if (typeof key === "string" || typeof key === "number") return String(key);
  return undefined;
}

function isNode(v: unknown): v is Node {
  return isScalar(v) || isCollection(v) || isAlias(v);
}

/** Marker message: the issue has no message of the schema author's own (see `issueMessage`). */
export const DEFAULT_MESSAGE = "\u0000spindrift-default-message";

/**
 * The problem code and message for a zod issue. `schema` is the schema of the value at the issue's path
 * (used to say what is allowed); `present` tells whether the value exists in the file. Messages written by the
 * schema's author (refinements, `error:` options) are kept as they are.
 */
export function issueMessage(
  issue: z.core.$ZodIssue,
  schema: z.core.$ZodType | undefined,
  present: boolean,
): { code: ProblemCode; message: string } {
  const own = issue.message !== DEFAULT_MESSAGE ? issue.message : undefined;
  const allowed = schema ? describeAllowed(schema) : undefined;
  const mustBe = (fallback: string) => own ?? (allowed ? `must be ${allowed}` : fallback);
  if (!present && (issue.code === "invalid_type" || issue.code === "invalid_union")) {
    const options = issue.code === "invalid_union" && issue.discriminator !== undefined && "options" in issue
      ? issue.options ?? []
      : [];
    const what = options.length > 0 ? `one of ${options.map((o) => JSON.stringify(o)).join(", ")}` : allowed;
    return { code: "missing", message: what ? `required: ${what}` : own ?? "required" };
  }
  switch (issue.code) {
    case "invalid_type":
      return { code: "wrong-type", message: mustBe(`must be ${article(issue.expected)}`) };
    case "too_small":
    case "too_big":
    case "not_multiple_of":
      return { code: "out-of-range", message: mustBe("is out of range") };
    case "invalid_value": {
      const values = issue.values.map((v) => (typeof v === "string" ? v : String(v)));
      const typed = issue.input;
      const hint = typeof typed === "string" ? suggest(typed, values) : undefined;
      const base = own ?? `must be ${issue.values.length === 1 ? "" : "one of "}` +
          issue.values.map((v) => JSON.stringify(v)).join(", ");
      return { code: "not-allowed", message: base + (hint ? `; did you mean "${hint}"?` : "") };
    }
    case "invalid_format":
      return { code: "bad-format", message: mustBe(`must be a ${issue.format}`) };
    case "invalid_union": {
      const options = "options" in issue ? issue.options : undefined;
      if (issue.discriminator !== undefined && options && options.length > 0) {
        const choices = options.map((o) => JSON.stringify(o)).join(", ");
        const typed = valueAt(issue.input, issue.discriminator);
        const hint = typeof typed === "string" ? suggest(typed, options.map(String)) : undefined;
        return {
          code: "not-allowed",
          message: (own ?? `must be one of ${choices}`) + (hint ? `; did you mean "${hint}"?` : ""),
        };
      }
      return { code: "wrong-type", message: mustBe("does not match any allowed form") };
    }
    case "unrecognized_keys":
      return {
        code: "unknown-key",
        message: `unknown key${issue.keys.length > 1 ? "s" : ""} ${issue.keys.join(", ")}`,
      };
    case "custom":
      return { code: "rule", message: own ?? "is not allowed here" };
    default:
      return { code: "wrong-type", message: own ?? mustBe("is not allowed here") };
  }
}

function valueAt(v: unknown, key: string): unknown {
  return typeof v === "object" && v !== null ? (v as Record<string, unknown>)[key] : undefined;
}

function article(type: string): string {
  return /^[aeiou]/.test(type) ? `an ${type}` : `a ${type}`;
}
