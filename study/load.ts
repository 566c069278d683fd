/**
 * Reading and checking a study file: YAML text → validated `StudyFile`, or the complete list of problems.
 *
 * Checks, in order (all problems are collected; only a broken YAML structure stops early, since nothing after
 * it could be trusted):
 *
 * 1. YAML syntax: bad indentation, unclosed brackets or quotes, tabs, several documents, duplicate keys,
 *    unknown tags, aliases without anchors.
 * 2. Cross-field rules of `run`, `observables` and `sweep`, even when another field of the same section is
 *    wrong (zod skips refinements of an object with a bad field).
 * 3. The zod schema (`schema.ts`): for a known engine the engine's member of the study union (so its
 *    parameters are checked too); for an unknown engine the sections that do not depend on it.
 * 4. Unknown keys anywhere, with "did you mean" suggestions (also inside engine parameters whose schema would
 *    silently drop them).
 * 5. The sweep against the engine: every path names a parameter; every parameter point (base parameters with
 *    the swept values applied) passes the engine's schema, problems with a swept value being reported at that
 *    value in the sweep; no two points are identical; at most `MAX_POINTS` points.
 *
 * Before 2.–5., parameters an engine renamed (`Engine.upgradeParams`) are rewritten from their earlier spelling,
 * in `parameters` and in swept values; each rewrite is a warning (code `deprecated`) at the old spelling, and
 * the study goes on in the current spelling.
 *
 * Nothing here throws on bad input; exceptions from an engine's own checks become problems too.
 *
 * @example
 * ```ts
 * const loaded = await loadStudy("film.yaml");
 * if (!loaded.ok) {
 *   console.error(formatProblems(loaded.problems));
 * } else {
 *   const study = normalizeStudy(loaded.study, { text: loaded.text, sourcePath: "film.yaml" });
 * }
 * ```
 */
import type { z } from "zod";
import {
  isCollection,
  isMap,
  isScalar,
  isSeq,
  LineCounter,
  parseDocument,
  visit,
  type YAMLError,
} from "yaml";
import type { Engine } from "../engines/contract.ts";
import { ENGINES } from "../engines/registry.ts";
import { findUnknownKeys, lookupPath, schemaAt } from "./_schema_walk.ts";
import {
  DEFAULT_MESSAGE,
  formatPath,
  issueMessage,
  type ProblemCode,
  sortProblems,
  type StudyProblem,
  suggest,
  YamlLocator,
} from "./problems.ts";
import {
  engineStudySchema,
  MAX_POINTS,
  observablesRules,
  runRules,
  SEED_WHEN_UNUSED,
  splitSweepPath,
  type StudyFile,
  studyShellSchema,
  sweepPathSites,
  sweepRules,
} from "./schema.ts";
import { applySetting, countPoints, expandSweep, pointLabel, type Sweep } from "./sweep.ts";
import { canonicalJson } from "./hash.ts";

/** Outcome of loading a study: the validated study and its text, or every problem found. */
export type LoadResult =
  | {
    readonly ok: true;
    readonly study: StudyFile;
    readonly text: string;
    /** Deprecated spellings that were accepted and rewritten (say what to write instead). */
    readonly warnings: readonly StudyProblem[];
  }
  | { readonly ok: false; readonly problems: StudyProblem[]; readonly warnings?: readonly StudyProblem[] };

/** Options of `loadStudy` and `parseStudyText`. */
export interface LoadOptions {
  /** Engines a study may use (default: every registered engine). */
  // deno-lint-ignore no-explicit-any
  readonly engines?: readonly Engine<any>[];
}

/**
 * Reads and checks a study file. A file that cannot be read is reported as a problem, never thrown.
 *
 * @example
 * ```ts
 * const loaded = await loadStudy("examples/film-patch.yaml");
 * if (loaded.ok) console.log(loaded.study.name);
 * ```
 */
export async function loadStudy(path: string, opts: LoadOptions = {}): Promise<LoadResult> {
  let bytes: Uint8Array;
  try {
    bytes = await Deno.readFile(path);
  } catch (e) {
    return {
      ok: false,
      problems: [{
        file: path,
        line: 0,
        column: 0,
        path: "",
        message: readFailure(e),
        code: "file-unreadable",
      }],
    };
  }
  let text: string;
  try {
    text = new TextDecoder("utf-8", { fatal: true }).decode(bytes);
  } catch {
    return { ok: false, problems: [notUtf8(path, bytes)] };
  }
  return parseStudyText(text, path, opts);
}

/** The problem of a study file that is not UTF-8 text, at its first byte that is not. */
function notUtf8(file: string, bytes: Uint8Array): StudyProblem {
  const at = firstInvalidUtf8(bytes);
  const lineStart = bytes.lastIndexOf(0x0a, at - 1) + 1;
  let line = 1;
  for (let i = bytes.indexOf(0x0a); i >= 0 && i < at; i = bytes.indexOf(0x0a, i + 1)) line++;
  const column = new TextDecoder().decode(bytes.subarray(lineStart, at)).length + 1;
  const hex = bytes[at].toString(16).toUpperCase().padStart(2, "0");
  return {
    file,
    line,
    column,
    path: "",
    message: `the file is not UTF-8 text: byte 0x${hex} here is not UTF-8 (files saved as Latin-1 or ` +
      "Windows-1252 look like this); save the file with the encoding UTF-8",
    code: "not-utf8",
  };
}

/** Offset of the first byte that does not belong to a well-formed UTF-8 sequence (RFC 3629 §4). */
function firstInvalidUtf8(b: Uint8Array): number {
  let i = 0;
  while (i < b.length) {
    const c = b[i];
    const len = c < 0x80
      ? 1
      : c >= 0xc2 && c <= 0xdf
      ? 2
      : c >= 0xe0 && c <= 0xef
      ? 3
      : c >= 0xf0 && c <= 0xf4
      ? 4
      : 0;
    if (len === 0 || i + len > b.length) return i;
    for (let k = 1; k < len; k++) {
      const lo = k === 1 && c === 0xe0 ? 0xa0 : k === 1 && c === 0xf0 ? 0x90 : 0x80;
      const hi = k === 1 && c === 0xed ? 0x9f : k === 1 && c === 0xf4 ? 0x8f : 0xbf;
      if (b[i + k] < lo || b[i + k] > hi) return i;
    }
    i += len;
  }
  return b.length - 1;
}

function readFailure(e: unknown): string {
  if (e instanceof Deno.errors.NotFound) return "cannot read the study file: there is no such file";
  if (e instanceof Deno.errors.IsADirectory) return "cannot read the study file: it is a folder";
  if (e instanceof Deno.errors.PermissionDenied) return "cannot read the study file: permission denied";
  return `cannot read the study file: ${e instanceof Error ? e.message : String(e)}`;
}

const PARSE_OPTIONS = { error: () => DEFAULT_MESSAGE, reportInput: true } as const;

/**
 * Checks study text. `file` names the file in problems (e.g. the path the user typed).
 *
 * @example
 * ```ts
 * const r = parseStudyText("name: x\n", "x.yaml");
 * r.ok; // false: engine, parameters, seed and run are missing
 * ```
 */
export function parseStudyText(text: string, file: string, opts: LoadOptions = {}): LoadResult {
  try {
    return check(text, file, opts.engines ?? ENGINES);
  } catch (e) {
    // A defect of the checker (or of an engine's schema), not of the file: say so rather than crash.
    const message = `internal error while checking the study (please report it): ${
      e instanceof Error ? e.message : String(e)
    }`;
    return { ok: false, problems: [{ file, line: 0, column: 0, path: "", message, code: "internal" }] };
  }
}

// deno-lint-ignore no-explicit-any
function check(text: string, file: string, engines: readonly Engine<any>[]): LoadResult {
  const lineCounter = new LineCounter();
  const tooDeep = flowNestingBeyond(text, MAX_NESTING);
  if (tooDeep >= 0) {
    const c = new Collector(file, new YamlLocator(text, parseDocument(""), lineCounter));
    lineCounter.addNewLine(0);
    for (let i = text.indexOf("\n"); i >= 0; i = text.indexOf("\n", i + 1)) lineCounter.addNewLine(i + 1);
    c.addAt(tooDeep, "yaml-syntax", nestingMessage());
    return c.result();
  }
  const doc = parseDocument(text, { lineCounter, prettyErrors: false, uniqueKeys: true, logLevel: "error" });
  const c = new Collector(file, new YamlLocator(text, doc, lineCounter));

  // 1. YAML
  let fatal = false;
  for (const e of doc.errors) {
    const keyPath = e.code === "DUPLICATE_KEY" ? keyPathAt(doc.contents, e.pos[0], []) : undefined;
    if (keyPath) c.add(keyPath, "duplicate-key", "is given twice in the same map; keep one", { key: true });
    else {
      fatal = true;
      c.addAt(e.pos[0], yamlErrorCode(e), yamlErrorMessage(e));
    }
  }
  for (const w of doc.warnings) c.addAt(w.pos?.[0] ?? 0, "yaml-reference", yamlErrorMessage(w));
  if (fatal) return c.result();
  visit(doc, {
    Pair(_, pair) {
      if (isCollection(pair.key)) {
        fatal = true;
        c.addAt(
          pair.key.range?.[0] ?? 0,
          "yaml-syntax",
          "a key must be a word or a text, not a list or a map (is a ':' misplaced?)",
        );
      }
    },
    Alias(_, node) {
      if (!node.resolve(doc)) {
        fatal = true;
        const message = `*${node.source} refers to no anchor: define &${node.source} on a value above it`;
        const path = pathOfNode(doc.contents, node, []);
        if (path) c.add(path, "yaml-reference", message);
        else c.addAt(node.range?.[0] ?? 0, "yaml-reference", message);
      }
    },
  });
  if (fatal) return c.result();
  const deep = deepestNode(doc.contents, MAX_NESTING);
  if (deep !== null) {
    c.addAt(deep, "yaml-syntax", nestingMessage());
    return c.result();
  }
  let raw: unknown;
  try {
    raw = doc.toJS({ maxAliasCount: 1000 });
  } catch (e) {
    c.addAt(0, "yaml-reference", `the YAML cannot be read: ${e instanceof Error ? e.message : String(e)}`);
    return c.result();
  }
  if (raw === null || raw === undefined) {
    c.addAt(
      0,
      "not-a-study",
      "the file is empty: a study needs at least name, engine, parameters, seed and run",
    );
    return c.result();
  }
  if (!isRecord(raw)) {
    c.add([], "not-a-study", "a study file is a map of sections (name, engine, parameters, seed, run, …)", {
      value: true,
    });
    return c.result();
  }
  let data: Record<string, unknown> = raw;

  // The engine decides which schema applies.
  const engineId = data.engine;
  const engine = typeof engineId === "string" ? engines.find((e) => e.id === engineId) : undefined;
  const known = engines.map((e) => e.id);
  if (engine === undefined) {
    if (typeof engineId === "string" && engineId !== "") {
      const hint = suggest(engineId, known);
      c.add(
        ["engine"],
        "unknown-engine",
        `is not a known engine${hint ? `; did you mean "${hint}"?` : ""} Known engines: ${known.join(", ")}`,
        { value: true },
      );
    } else if (engineId === undefined) {
      c.add(["engine"], "missing", `required: the engine to run, one of ${known.join(", ")}`);
    } else {
      c.add(["engine"], "wrong-type", `must be an engine id, one of ${known.join(", ")}`, { value: true });
    }
  }
  // Earlier spellings of renamed engine parameters: rewritten, with a warning at the old spelling.
  if (engine?.upgradeParams) data = upgradeSpellings(c, engine, data);

  // 2. Cross-field rules first, so that they are reported at the place chosen here (zod repeats them when it
  // can run them; duplicates are dropped), and also when other fields of the same section are wrong.
  for (const r of runRules(data.run)) c.add(["run", ...r.path], "rule", r.message, { value: true });
  for (const r of observablesRules(data.observables)) {
    c.add(["observables", ...r.path], "rule", r.message, { value: true });
  }
  for (const r of sweepRules(data.sweep)) c.add(["sweep", ...r.path], "rule", r.message, { key: true });

  // 3. Schema
  const schema: z.ZodType = engine ? memberSchema(engine) : studyShellSchema;
  const parsed = safeParse(schema, data);
  if (parsed.thrown !== undefined) {
    c.add(["parameters"], "rule", `the engine's parameter check failed: ${parsed.thrown}`);
  }
  for (const issue of parsed.issues) {
    if (issue.code === "unrecognized_keys") continue; // reported per key below, with suggestions
    if (issue.path.length >= 1 && issue.path[0] === "engine") continue; // reported above
    c.issue(issue, schema, data, issue.path as (string | number)[]);
  }

  // 4. Unknown keys
  for (const u of findUnknownKeys(schema, data)) c.unknownKey(u.path, u.allowed);

  // 5. Sweep against the engine: paths always; points only when the sweep section itself is sound.
  if (engine && isRecord(data.sweep)) {
    const sound = !c.has((p) => p[0] === "sweep");
    checkSweep(c, engine, data.sweep, isRecord(data.parameters) ? data.parameters : {}, sound);
  }

  if (c.count > 0) return c.result();
  if (engine?.usesSeed === false && data.seed === undefined) data = { ...data, seed: SEED_WHEN_UNUSED };
  const shell = studyShellSchema.safeParse(data);
  if (!shell.success) {
    for (const issue of shell.error.issues) {
      c.issue(issue, studyShellSchema, data, issue.path as (string | number)[]);
    }
    return c.result();
  }
  return { ok: true, study: shell.data, text, warnings: c.warnings };
}

/** `data` with `parameters` and swept values in the engine's current spelling; each rewrite warns. */
function upgradeSpellings(
  c: Collector,
  // deno-lint-ignore no-explicit-any
  engine: Engine<any>,
  data: Record<string, unknown>,
): Record<string, unknown> {
  const upgrade = engine.upgradeParams!;
  const out = { ...data };
  if (isRecord(data.parameters)) {
    const up = upgrade(data.parameters);
    for (const n of up.notes) c.warn(["parameters", ...n.path], n.message);
    if (up.notes.length > 0) out.parameters = up.params;
  }
  if (!isRecord(data.sweep)) return out;
  const sweep = structuredClone(data.sweep) as Record<string, unknown>;
  let changed = false;
  for (const site of sweepPathSites(sweep)) {
    const list = getAt(sweep, site.at);
    if (!Array.isArray(list)) continue;
    list.forEach((value, i) => {
      const alone = applySetting({}, { [site.path]: value });
      const up = upgrade(alone);
      if (up.notes.length === 0) return;
      const now = getAt(up.params, splitSweepPath(site.path));
      if (
        now !== undefined &&
        canonicalJson(applySetting({}, { [site.path]: now })) === canonicalJson(up.params)
      ) {
        list[i] = now;
        changed = true;
        for (const n of up.notes) {
          c.warn(["sweep", ...site.at, i], `${n.message} (parameters.${formatPath(n.path)})`);
        }
      } else {
        c.add(
          ["sweep", ...site.at],
          "sweep-path",
          `uses an earlier spelling that cannot be swept as written: ${
            up.notes[0].message
          }; sweep the new fields`,
          { key: true },
        );
      }
    });
  }
  if (changed) out.sweep = sweep;
  return out;
}

// deno-lint-ignore no-explicit-any
const memberCache = new WeakMap<Engine<any>, z.ZodType>();
// deno-lint-ignore no-explicit-any
function memberSchema(engine: Engine<any>): z.ZodType {
  let s = memberCache.get(engine);
  if (!s) memberCache.set(engine, s = engineStudySchema(engine));
  return s;
}

function safeParse(
  schema: z.ZodType,
  value: unknown,
): { issues: z.core.$ZodIssue[]; thrown?: string; data?: unknown } {
  try {
    const r = schema.safeParse(value, PARSE_OPTIONS);
    return r.success ? { issues: [], data: r.data } : { issues: r.error.issues };
  } catch (e) {
    return { issues: [], thrown: e instanceof Error ? e.message : String(e) };
  }
}

function cap(s: string): string {
  return s.charAt(0).toUpperCase() + s.slice(1);
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

function getAt(root: unknown, path: readonly PropertyKey[]): unknown {
  let v = root;
  for (const seg of path) {
    if (typeof v !== "object" || v === null) return undefined;
    v = (v as Record<PropertyKey, unknown>)[seg];
  }
  return v;
}

/** Deepest nesting of lists and maps a study file may have (studies need fewer than ten levels). */
const MAX_NESTING = 64;

function nestingMessage(): string {
  return `YAML syntax: lists and maps are nested more than ${MAX_NESTING} levels deep here; a study needs a few ` +
    "(is a bracket repeated, or the file not a study?)";
}

/**
 * Offset where flow lists/maps ([ and {) first nest deeper than `max`, or -1. Quoted text and comments are
 * skipped. Checked before parsing: the YAML parser itself recurses once per level.
 */
function flowNestingBeyond(text: string, max: number): number {
  let depth = 0;
  for (let i = 0; i < text.length; i++) {
    const ch = text[i];
    if (ch === "'" || ch === '"') {
      const end = text.indexOf(ch, i + 1);
      if (end < 0) return -1;
      i = end;
    } else if (ch === "#" && (i === 0 || /\s/.test(text[i - 1]))) {
      const nl = text.indexOf("\n", i);
      if (nl < 0) return -1;
      i = nl;
    } else if (ch === "[" || ch === "{") {
      if (++depth > max) return i;
    } else if (ch === "]" || ch === "}") {
      depth = Math.max(0, depth - 1);
    }
  }
  return -1;
}

/** Offset of a node nested deeper than `max` (block or flow), found without recursion; null when none. */
function deepestNode(root: unknown, max: number): number | null {
  const stack: { node: unknown; depth: number }[] = [{ node: root, depth: 0 }];
  while (stack.length > 0) {
    const { node, depth } = stack.pop()!;
    if (!isCollection(node)) continue;
    if (depth > max) return node.range?.[0] ?? 0;
    for (const item of node.items) {
      if (isMap(node)) {
        const pair = item as { value?: unknown };
        stack.push({ node: pair.value, depth: depth + 1 });
      } else stack.push({ node: item, depth: depth + 1 });
    }
  }
  return null;
}

function yamlErrorCode(e: YAMLError): ProblemCode {
  if (e.code === "DUPLICATE_KEY") return "duplicate-key";
  if (e.code === "TAG_RESOLVE_FAILED" || e.code === "BAD_ALIAS") return "yaml-reference";
  return "yaml-syntax";
}

function lowerFirst(message: string): string {
  const m = message.replace(/ at line \d+, column \d+.*$/s, "");
  return m.charAt(0).toLowerCase() + m.slice(1);
}

/** Path of `target` inside `node`, if it is there. */
function pathOfNode(
  node: unknown,
  target: unknown,
  path: (string | number)[],
): (string | number)[] | undefined {
  if (node === target) return path;
  if (isMap(node)) {
    for (const pair of node.items) {
      if (!isScalar(pair.key)) continue;
      const inner = pathOfNode(pair.value, target, [...path, String(pair.key.value)]);
      if (inner) return inner;
    }
  } else if (isSeq(node)) {
    for (let i = 0; i < node.items.length; i++) {
      const inner = pathOfNode(node.items[i], target, [...path, i]);
      if (inner) return inner;
    }
  }
  return undefined;
}

/** Path of the map key that starts at `offset`, if any. */
function keyPathAt(
  node: unknown,
  offset: number,
  path: (string | number)[],
): (string | number)[] | undefined {
  if (isMap(node)) {
    for (const pair of node.items) {
      const key = isScalar(pair.key) ? String(pair.key.value) : undefined;
      if (key === undefined) continue;
      if (isScalar(pair.key) && pair.key.range?.[0] === offset) return [...path, key];
      const inner = keyPathAt(pair.value, offset, [...path, key]);
      if (inner) return inner;
    }
  } else if (isSeq(node)) {
    for (let i = 0; i < node.items.length; i++) {
      const inner = keyPathAt(node.items[i], offset, [...path, i]);
      if (inner) return inner;
    }
  }
  return undefined;
}

function yamlErrorMessage(e: YAMLError): string {
  switch (e.code) {
    case "BAD_INDENT":
      if (/^Flow sequence/.test(e.message)) {
        return "YAML syntax: a list opened with [ above is not closed with ] (or this line is not indented enough)";
      }
      if (/^Flow map/.test(e.message)) {
        return "YAML syntax: a map opened with { above is not closed with } (or this line is not indented enough)";
      }
      return `YAML syntax: ${lowerFirst(e.message)}`;
    case "BLOCK_AS_IMPLICIT_KEY":
      return "YAML syntax: a line below is indented deeper than the keys of this map; keys of one map line up";
    case "TAB_AS_INDENT":
      return "YAML syntax: a tab is used for indentation; indent with spaces";
    case "MULTIPLE_DOCS":
      return "YAML syntax: the file holds several documents (separated by ---); a study file holds one";
    case "TAG_RESOLVE_FAILED":
      return `${e.message.replace(/^Unresolved tag/, "unknown YAML tag")}; remove the tag (values need none)`;
    default:
      return `YAML syntax: ${lowerFirst(e.message)}`;
  }
}

/** Collects problems without duplicates (same path, code and message). */
class Collector {
  readonly #file: string;
  readonly #problems: StudyProblem[] = [];
  readonly #warnings: StudyProblem[] = [];
  readonly #seen = new Set<string>();
  readonly #paths: (readonly PropertyKey[])[] = [];
  readonly locator: YamlLocator;

  constructor(file: string, locator: YamlLocator) {
    this.#file = file;
    this.locator = locator;
  }

  get count(): number {
    return this.#problems.length;
  }

  has(pred: (path: readonly PropertyKey[]) => boolean): boolean {
    return this.#paths.some(pred);
  }

  push(p: StudyProblem, path: readonly PropertyKey[]): void {
    const key = `${p.path}\u0000${p.code}\u0000${p.message}`;
    if (this.#seen.has(key)) return;
    this.#seen.add(key);
    this.#problems.push(p);
    this.#paths.push(path);
  }

  /** A warning (the study is still valid) at a field path: an earlier spelling that was accepted. */
  warn(path: readonly PropertyKey[], message: string): void {
    let loc = this.locator.locate(path, {});
    // A block map or list is pointed at by its key, without repeating it.
    const block = loc.value === "a map" || loc.value?.startsWith("a list of ") === true;
    if (block) loc = this.locator.locate(path, { key: true });
    const value = loc.exact && !block ? loc.value : undefined;
    this.#warnings.push({
      file: this.#file,
      line: loc.line,
      column: loc.column,
      path: formatPath(path),
      ...(value !== undefined ? { value } : {}),
      message,
      code: "deprecated",
    });
  }

  get warnings(): StudyProblem[] {
    return sortProblems(this.#warnings);
  }

  /** A problem at a character offset (YAML errors; only the first at each place, later ones are echoes). */
  addAt(offset: number, code: ProblemCode, message: string): void {
    const { line, column } = this.locator.position(offset);
    if (this.#problems.some((p) => p.path === "" && p.line === line && p.column === column)) return;
    this.push({ file: this.#file, line, column, path: "", message, code }, []);
  }

  /** A problem at a field path; `value` shows the value as written, `key` points at the key. */
  add(
    path: readonly PropertyKey[],
    code: ProblemCode,
    message: string,
    opts: { value?: boolean; key?: boolean; shown?: readonly PropertyKey[] } = {},
  ): void {
    const loc = this.locator.locate(path, { key: opts.key });
    const value = opts.value && loc.exact ? loc.value : undefined;
    this.push({
      file: this.#file,
      line: loc.line,
      column: loc.column,
      path: formatPath(opts.shown ?? path),
      ...(value !== undefined ? { value } : {}),
      message,
      code,
    }, opts.shown ?? path);
  }

  /** A zod issue found on `data` against `schema`, reported at `at` (a path in the file). */
  issue(
    issue: z.core.$ZodIssue,
    schema: z.core.$ZodType,
    data: unknown,
    at: readonly PropertyKey[],
    opts: { suffix?: string; shown?: readonly PropertyKey[]; code?: ProblemCode } = {},
  ): void {
    const value = getAt(data, issue.path);
    const present = value !== undefined;
    const node = schemaAt(schema, issue.path, data);
    const { code, message } = issueMessage(issue, node, present);
    const showValue = present && (issue.code !== "custom" || typeof value !== "object" || value === null);
    this.add(at, opts.code ?? code, message + (opts.suffix ?? ""), { value: showValue, shown: opts.shown });
  }

  unknownKey(
    path: readonly (string | number)[],
    allowed: readonly string[],
    shown?: readonly PropertyKey[],
  ): void {
    const key = String(path[path.length - 1]);
    const hint = suggest(key, allowed);
    const list = allowed.length === 0
      ? "nothing may be added here"
      : `allowed here: ${allowed.slice(0, 12).join(", ")}${allowed.length > 12 ? ", …" : ""}`;
    const message = hint ? `unknown key; did you mean "${hint}"? ${cap(list)}` : `unknown key; ${list}`;
    this.add(path, "unknown-key", message, {
      key: true,
      shown,
    });
  }

  result(): LoadResult {
    return { ok: false, problems: sortProblems(this.#problems), warnings: this.warnings };
  }
}

function checkSweep(
  c: Collector,
  // deno-lint-ignore no-explicit-any
  engine: Engine<any>,
  sweep: Record<string, unknown>,
  base: Record<string, unknown>,
  expand: boolean,
): void {
  const paramsSchema = engine.paramsSchema as z.core.$ZodType;
  let pathsOk = true;
  for (const site of sweepPathSites(sweep)) {
    const segments = splitSweepPath(site.path);
    const found = lookupPath(paramsSchema, segments);
    if (found.ok) continue;
    pathsOk = false;
    const at = ["sweep", ...site.at];
    if (
      segments[0] === "parameters" && segments.length > 1 && lookupPath(paramsSchema, segments.slice(1)).ok
    ) {
      c.add(at, "sweep-path", `paths are relative to parameters: write ${segments.slice(1).join(".")}`, {
        key: true,
      });
      continue;
    }
    const parent = segments.slice(0, found.failedAt);
    const bad = segments[found.failedAt];
    const where = parent.length ? `parameters.${parent.join(".")}` : "parameters";
    if (found.reason === "not-a-map") {
      c.add(
        at,
        "sweep-path",
        `${where} is not a map, so it has no field ${bad}; sweep ${parent.join(".")} itself`,
        {
          key: true,
        },
      );
      continue;
    }
    const hint = suggest(bad, found.allowed);
    const fix = hint ? [...parent, hint, ...segments.slice(found.failedAt + 1)].join(".") : undefined;
    c.add(
      at,
      "sweep-path",
      `no parameter ${segments.slice(0, found.failedAt + 1).join(".")} in engine ${engine.id}` +
        (fix ? `; did you mean ${fix}? Keys` : "; keys") + ` of ${where}: ${found.allowed.join(", ")}`,
      { key: true },
    );
  }
  if (!pathsOk || !expand) return;

  const n = countPoints(sweep as Sweep);
  if (n > MAX_POINTS) {
    c.add(
      ["sweep"],
      "sweep-points",
      `expands to ${n} parameter points; at most ${MAX_POINTS} are allowed in one study (split it, or sweep fewer values)`,
      { key: true },
    );
    return;
  }

  const baseIssues = new Set(
    safeParse(paramsSchema as z.ZodType, base).issues.map((i) => issueKey(i.path, i)),
  );
  const sweptPrefix = (path: readonly PropertyKey[], sources: Readonly<Record<string, unknown>>) =>
    Object.keys(sources).find((p) => {
      const seg = splitSweepPath(p);
      return seg.length <= path.length && seg.every((s, i) => String(path[i]) === s);
    });
  const missingReported = new Set<string>();
  const duplicates: [number, number][] = [];
  const firstSeen = new Map<string, number>();
  const labels: string[] = [];
  const pending = new Map<
    string,
    { first: string; more: number; at: readonly PropertyKey[]; issue: z.core.$ZodIssue; params: unknown }
  >();
  expandSweep(sweep as Sweep).forEach((setting, k) => {
    const params = applySetting(base, setting.varied);
    const label = pointLabel(setting.varied);
    labels.push(label);
    // Unknown keys brought in by swept values (inside a swept map, or a path the chosen form lacks).
    for (const u of findUnknownKeys(paramsSchema, params)) {
      const swept = sweptPrefix(u.path, setting.sources);
      if (swept === undefined) continue; // in the base parameters: reported by the main walk
      const rest = u.path.slice(splitSweepPath(swept).length);
      if (rest.length > 0) {
        c.unknownKey(["sweep", ...setting.sources[swept], ...rest], u.allowed);
      } else if (!missingReported.has(swept)) {
        missingReported.add(swept);
        const parent = u.path.slice(0, -1);
        const owner = parent.length ? `parameters.${formatPath(parent)}` : "parameters";
        c.add(
          ["sweep", ...setting.sources[swept].slice(0, -1)],
          "sweep-path",
          `${owner} has no field ${String(u.path.at(-1))} in the form it takes at point ${label} ` +
            `(allowed there: ${
              u.allowed.join(", ")
            }); change the base parameters or sweep ${owner} as a whole`,
          { key: true },
        );
      }
    }
    const r = safeParse(paramsSchema as z.ZodType, params);
    if (r.thrown !== undefined) {
      c.add(["sweep"], "sweep-value", `the engine's parameter check failed at point ${label}: ${r.thrown}`, {
        key: true,
      });
      return;
    }
    if (r.issues.length === 0) {
      const key = canonicalJson(r.data);
      const prev = firstSeen.get(key);
      if (prev === undefined) firstSeen.set(key, k);
      else duplicates.push([prev, k]);
      return;
    }
    for (const issue of r.issues) {
      if (issue.code === "unrecognized_keys") continue; // reported above with suggestions
      const ip = issue.path as (string | number)[];
      const swept = sweptPrefix(ip, setting.sources);
      if (swept !== undefined) {
        const rest = ip.slice(splitSweepPath(swept).length);
        const at = ["sweep", ...setting.sources[swept], ...rest];
        const suffix = rest.length > 0 ? ` (parameters.${formatPath(ip)})` : "";
        c.issue(issue, paramsSchema, params, at, { suffix, code: "sweep-value" });
        continue;
      }
      const key = issueKey(ip, issue);
      if (baseIssues.has(key)) continue; // the base parameters have it too: reported once, there
      const seen = pending.get(key);
      if (seen) seen.more++;
      else pending.set(key, { first: label, more: 0, at: ["parameters", ...ip], issue, params });
    }
  });
  if (duplicates.length > 0) {
    const [a, b] = duplicates[0];
    const more = duplicates.length - 1;
    c.add(
      ["sweep"],
      "sweep-points",
      `points ${a} (${labels[a]}) and ${b} (${labels[b]}) have identical parameters once defaults are ` +
        `applied${
          more > 0 ? ` (and ${more} more pair${more === 1 ? "" : "s"})` : ""
        }; each point must differ`,
      { key: true },
    );
  }
  for (const p of pending.values()) {
    const others = p.more > 0 ? ` and ${p.more} other point${p.more === 1 ? "" : "s"}` : "";
    c.issue(p.issue, paramsSchema, p.params, p.at, {
      suffix: ` (at sweep point ${p.first}${others})`,
      code: "sweep-value",
    });
  }
}

function issueKey(path: readonly PropertyKey[], issue: z.core.$ZodIssue): string {
  return `${formatPath(path)}\u0000${issue.code}\u0000${issue.message}`;
}
