/**
 * Placeholders: how a realisation's seed, index, paths, run controls and swept parameters reach an external
 * program, through its arguments, environment variables, generated input files and output file name.
 *
 * A placeholder is a name in braces:
 *
 * | placeholder            | replaced by                                                                  |
 * |------------------------|------------------------------------------------------------------------------|
 * | `{seed}`               | the realisation's 64-bit program seed, in decimal (0 ≤ seed < 2⁶⁴)           |
 * | `{seed32}`             | its high 32 bits, in decimal (0 ≤ seed32 < 2³²), for programs with 32-bit seeds |
 * | `{index}`, `{number}`  | the realisation index from 0, and from 1; `{index:3}` pads with zeros: 007   |
 * | `{output}`             | absolute path of the output file the program must write                      |
 * | `{workdir}`            | absolute path of the realisation's own work folder (the program's cwd)      |
 * | `{studydir}`           | absolute path of the study file's folder                                     |
 * | `{run.duration}` …     | the study's run controls: duration, sampleInterval, tolerance, maxDistance   |
 * | `{param.<path>}`       | a value of the engine's free-form `parameters` map, e.g. `{param.D}`,         |
 * |                        | `{param.grid.n}`, `{param.list.0}`; a sweep varies it like any parameter     |
 *
 * Values are written as text: numbers in their shortest round-trip form (0.25, 1e-7), booleans as true/false,
 * lists and maps as JSON. Any other text in braces is kept as written (so JSON and namelist templates need no
 * escaping), except names that look like a misspelt placeholder (another case, or one letter off, e.g.
 * `{Seed}`, `{indx}`, `{params.D}`), which are refused so a typo never reaches the program silently.
 *
 * Where paths are being named (`output.file`, `inputFiles[].file`) only `{seed}`, `{seed32}`, `{index}`,
 * `{number}`, `{run.*}` and `{param.*}` are allowed.
 *
 * @example
 * ```ts
 * const text = renderTemplate("--seed {seed} --D {param.D}", {
 *   seed: "12345", seed32: "0", index: 0, run, parameters: { D: 0.25 },
 * });
 * // "--seed 12345 --D 0.25"
 * ```
 */
import { editDistance } from "../_edit_distance.ts";
import type { JsonValue, RunControls } from "../contract.ts";

/** Placeholders without a dot. */
export const SIMPLE_PLACEHOLDERS = [
  "seed",
  "seed32",
  "index",
  "number",
  "output",
  "workdir",
  "studydir",
] as const;
/** Names after `run.`. */
export const RUN_PLACEHOLDERS = ["duration", "sampleInterval", "tolerance", "maxDistance"] as const;

/** Where a template is used: "full" (arguments, environment, input files) or "name" (file names). */
export type PlaceholderScope = "full" | "name";

const PATH_ONLY: readonly string[] = ["output", "workdir", "studydir"];
const PADDABLE: readonly string[] = ["index", "number"];

/** A word in braces that could be a placeholder: `{name}` or `{name:width}`. */
const CANDIDATE = /\{([A-Za-z_][A-Za-z0-9_.-]*)(?::(\d{1,2}))?\}/g;

/** Values the placeholders of one realisation take. */
export interface PlaceholderValues {
  /** `{seed}`: decimal text of the 64-bit program seed. */
  readonly seed: string;
  /** `{seed32}`: decimal text of its high 32 bits. */
  readonly seed32: string;
  /** Realisation index from 0. */
  readonly index: number;
  readonly run: RunControls;
  /** The engine's free-form `parameters` map. */
  readonly parameters: Readonly<Record<string, JsonValue>>;
  /** Absolute paths; absent while file names themselves are being rendered. */
  readonly output?: string;
  readonly workdir?: string;
  readonly studydir?: string;
}

/** Thrown by {@link renderTemplate} for a placeholder that cannot be filled (the message says why). */
export class PlaceholderError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "PlaceholderError";
  }
}

/** The placeholder a misspelt brace word was probably meant to be, or null when it is ordinary text. */
function likelyMeant(name: string): string | null {
  const dot = name.indexOf(".");
  if (dot < 0) {
    for (const p of SIMPLE_PLACEHOLDERS) {
      if (name.toLowerCase() === p.toLowerCase() || (name.length >= 3 && editDistance(name, p) <= 1)) {
        return p;
      }
    }
    return null;
  }
  const head = name.slice(0, dot);
  const rest = name.slice(dot + 1);
  const lower = head.toLowerCase();
  if (
    head !== "param" &&
    (lower === "param" || lower === "params" || lower === "parameter" || lower === "parameters")
  ) {
    return `param.${rest}`;
  }
  if (head !== "run" && lower === "run") return `run.${rest}`;
  return null;
}

/** Parameter value at a dotted path (list items by number), or undefined. */
export function parameterAt(
  parameters: Readonly<Record<string, JsonValue>>,
  path: string,
): JsonValue | undefined {
  let v: JsonValue | undefined = parameters as JsonValue;
  for (const key of path.split(".")) {
    if (v === null || typeof v !== "object") return undefined;
    if (Array.isArray(v)) {
      if (!/^\d+$/.test(key)) return undefined;
      v = (v as readonly JsonValue[])[Number(key)];
    } else {
      const map = v as Readonly<Record<string, JsonValue>>;
      v = Object.hasOwn(map, key) ? map[key] : undefined;
    }
  }
  return v;
}

/**
 * Text form of a value: numbers in their shortest round-trip form (−0 as "0", as content hashes treat them
 * alike), booleans true/false, lists and maps as JSON.
 */
export function valueText(v: JsonValue): string {
  if (typeof v === "string") return v;
  if (typeof v === "number" || typeof v === "boolean") return String(v);
  return JSON.stringify(v);
}

function topLevelNames(parameters: Readonly<Record<string, JsonValue>>): string {
  const names = Object.keys(parameters);
  return names.length === 0 ? "the map is empty" : `it has ${names.map((n) => `'${n}'`).join(", ")}`;
}

/** Brace words in `text` that are placeholders or look like misspelt ones (e.g. ["seed", "param.D"]). */
export function placeholderNames(text: string): string[] {
  const names: string[] = [];
  for (const m of text.matchAll(CANDIDATE)) {
    const name = m[1];
    const known = (SIMPLE_PLACEHOLDERS as readonly string[]).includes(name) || name.startsWith("run.") ||
      name.startsWith("param.");
    if (known || likelyMeant(name) !== null) names.push(name);
  }
  return names;
}

/**
 * Problems of the placeholders in `text` (empty when every placeholder can be filled): unknown `{run.*}` or
 * `{param.*}` names, likely typos, widths on names other than index/number, path placeholders in file names.
 */
export function templateProblems(
  text: string,
  scope: PlaceholderScope,
  parameters: Readonly<Record<string, JsonValue>>,
): string[] {
  const problems: string[] = [];
  for (const m of text.matchAll(CANDIDATE)) {
    const [whole, name, width] = m;
    const problem = placeholderProblem(name, width, scope, parameters);
    if (problem !== null) problems.push(`${whole}: ${problem}`);
  }
  return problems;
}

function placeholderProblem(
  name: string,
  width: string | undefined,
  scope: PlaceholderScope,
  parameters: Readonly<Record<string, JsonValue>>,
): string | null {
  if ((SIMPLE_PLACEHOLDERS as readonly string[]).includes(name)) {
    if (scope === "name" && PATH_ONLY.includes(name)) {
      return `{${name}} is a path; file names may use {seed}, {seed32}, {index}, {number}, {run.*} and {param.*}`;
    }
    if (width !== undefined && !PADDABLE.includes(name)) {
      return `a width (':${width}') applies to {index} and {number} only`;
    }
    return null;
  }
  if (name.startsWith("run.")) {
    const key = name.slice(4);
    if (!(RUN_PLACEHOLDERS as readonly string[]).includes(key)) {
      return `unknown run control '${key}'; the run placeholders are ${
        RUN_PLACEHOLDERS.map((r) => `{run.${r}}`).join(", ")
      }`;
    }
    return width === undefined ? null : `a width (':${width}') applies to {index} and {number} only`;
  }
  if (name.startsWith("param.")) {
    const path = name.slice(6);
    if (path === "" || path.split(".").some((p) => p === "")) {
      return "write the parameter's path after 'param.', e.g. {param.D}";
    }
    if (parameterAt(parameters, path) === undefined) {
      return `parameters.${path} is not set (the engine's \`parameters\` map: ${topLevelNames(parameters)})`;
    }
    return width === undefined ? null : `a width (':${width}') applies to {index} and {number} only`;
  }
  const meant = likelyMeant(name);
  return meant === null ? null : `not a placeholder; did you mean {${meant}}?`;
}

/**
 * Replaces every placeholder in `text` with its value (through `quote` when given, e.g. shell quoting). Text in
 * braces that is not a placeholder stays as written.
 *
 * @throws PlaceholderError when a placeholder cannot be filled (unknown name, likely typo, missing path value).
 */
export function renderTemplate(
  text: string,
  values: PlaceholderValues,
  quote: (value: string) => string = (v) => v,
): string {
  return text.replace(CANDIDATE, (whole: string, name: string, width: string | undefined) => {
    const scope: PlaceholderScope = values.output === undefined ? "name" : "full";
    const problem = placeholderProblem(name, width, scope, values.parameters);
    if (problem !== null) throw new PlaceholderError(`${whole}: ${problem}`);
    const v = placeholderValue(name, width, values);
    return v === null ? whole : quote(v);
  });
}

function placeholderValue(name: string, width: string | undefined, values: PlaceholderValues): string | null {
  switch (name) {
    case "seed":
      return values.seed;
    case "seed32":
      return values.seed32;
    case "index":
    case "number": {
      const v = String(name === "number" ? values.index + 1 : values.index);
      return width === undefined ? v : v.padStart(Number(width), "0");
    }
    case "output":
    case "workdir":
    case "studydir":
      return values[name] ?? null;
  }
  if (name.startsWith("run.")) return String(values.run[name.slice(4) as keyof RunControls]);
  if (name.startsWith("param.")) {
    const v = parameterAt(values.parameters, name.slice(6));
    return v === undefined ? null : valueText(v);
  }
  return null;
}
