/**
 * The `parameters` section of the external-program engines (`external-program-2d`, `external-program-3d`):
 * which program to run, how each realisation's seed and parameters reach it, where its output is and how to
 * read it. A zod 4 schema, the single source of truth for the format. The output part (`output`, `columns`,
 * `units`, `timing`, and in 3D `coreRadius`, `markersWithoutColumn`) is the imported-data engines' format
 * (`engines/imported/params.ts`), checked by the same rules.
 *
 * ```yaml
 * engine: external-program-2d
 * parameters:
 *   command:
 *     program: node                      # looked up on PATH; or a path (relative to the study file)
 *     args: ["{studydir}/walker.mjs", --seed, "{seed}", --diffusion, "{param.D}", --out, "{output}"]
 *   inputFiles:                          # written into the work folder before the program starts
 *     - file: walker.json
 *       text: '{ "sigma0": {param.sigma0} }'
 *   environment: { WALKER_COUNT: "{param.walkers}" }
 *   parameters: { D: 0.25, sigma0: 2, walkers: 20 }     # free form; sweep them as parameters.D, …
 *   output: { file: tracks.csv }         # read like imported data (columns, units, timing as there)
 *   timeoutSeconds: 60
 * ```
 *
 * Nothing runs through a shell unless `command.shell: true` says so: the program is started directly with its
 * argument list. See `placeholders.ts` for the placeholders and `engine.ts` for the work folder.
 *
 * @example
 * ```ts
 * import { external2dParamsSchema } from "./params.ts";
 * const p = external2dParamsSchema.parse({
 *   command: { program: "./sim", args: ["--seed", "{seed}"] },
 *   output: { file: "tracks.csv" },
 *   timeoutSeconds: 600,
 * });
 * p.keepWorkFolders; // "failed"
 * ```
 */
import { z } from "zod";
import type { JsonValue } from "../contract.ts";
import { filaments3dParamsSchema, tracks2dParamsSchema } from "../imported/mod.ts";
import { placeholderNames, type PlaceholderScope, renderTemplate, templateProblems } from "./placeholders.ts";

/** Environment variables every realisation gets; a study may not set them itself. */
export const SPINDRIFT_ENVIRONMENT = [
  "SPINDRIFT_SEED",
  "SPINDRIFT_SEED32",
  "SPINDRIFT_INDEX",
  "SPINDRIFT_WORKDIR",
  "SPINDRIFT_OUTPUT",
] as const;

/** Files spindrift writes into every work folder: the program's complete standard output and error. */
export const STDOUT_LOG = "spindrift-stdout.txt";
export const STDERR_LOG = "spindrift-stderr.txt";

/** Longest time limit (s): timers count milliseconds in a signed 32-bit integer (HTML timers, 2³¹ − 1 ms). */
export const MAX_TIMEOUT_SECONDS = 2_000_000;

const ENV_NAME = /^[A-Za-z_][A-Za-z0-9_]*$/;
const PARAMETER_KEY = /^[A-Za-z0-9_-]+$/;

const source = tracks2dParamsSchema.shape.source.shape;
const tracks = tracks2dParamsSchema.shape;
const filaments = filaments3dParamsSchema.shape;

const finitePositive = () =>
  z.number().positive().refine(Number.isFinite, { message: "must be a finite number" });

const word = z.union([z.string(), z.number(), z.boolean()]);

const commandSchema = z.object({
  program: z.string().min(1).describe(
    "The executable, named as written: a name looked up on PATH (e.g. node, python3) or a path (relative " +
      "paths from the study file's folder). No placeholders: the launcher grants permission to run exactly " +
      "this program. With shell: true, a command line for /bin/sh instead (placeholders allowed, their values " +
      "inserted single-quoted).",
  ),
  args: z.array(word).default([]).describe(
    "Arguments, one list item each, passed as they are (no splitting, no quoting, no shell); placeholders " +
      "such as {seed}, {output}, {param.D} are replaced. Numbers and booleans are written as text. With " +
      "shell: true they reach the command line as $1, $2, …",
  ),
  shell: z.boolean().default(false).describe(
    "Run `program` as a /bin/sh command line (sh -c). Off by default: the program starts directly and nothing " +
      "passes through a shell.",
  ),
  version: z.string().min(1).optional().describe(
    "Free text naming the program's version (e.g. a commit id). It is part of the parameter point: change it " +
      "when the program changes, so new results are not mixed with stored ones.",
  ),
}).strict().describe("The program each realisation runs, and its arguments.");

const inputFileSchema = z.object({
  file: z.string().min(1).describe(
    "Name of the file written into the work folder before the program starts (relative, no '..'; may use " +
      "{index}, {seed}, {param.*}).",
  ),
  template: z.string().min(1).optional().describe(
    "Template file (path relative to the study file's folder); its placeholders are replaced.",
  ),
  text: z.string().optional().describe("The template as inline text; its placeholders are replaced."),
}).strict();

const outputSchema = z.object({
  file: z.string().min(1).describe(
    "The file the program writes, relative to its work folder (no '..'; may use {index}, {seed}, {param.*}). " +
      "Its absolute path is {output}.",
  ),
  format: source.format,
  delimiter: source.delimiter,
  comment: source.comment,
  header: source.header,
  group: z.string().min(1).optional().describe(
    "HDF5 only: group holding the column datasets (placeholders allowed). Default: the root group.",
  ),
}).strict().describe(
  "What the program writes and how to read it: one file per realisation, in the imported-data format " +
    "(one row per object per record time, rows sorted by time).",
);

/** Parameters shared by both engines (before the dimension-specific output fields). */
const common = {
  command: commandSchema,
  inputFiles: z.array(inputFileSchema).default([]).describe(
    "Input files generated for each realisation from a template (template: file, or text: inline).",
  ),
  environment: z.record(z.string(), word).default({}).describe(
    "Environment variables added to spindrift's own (NAME: value; placeholders allowed). Every realisation " +
      `also gets ${SPINDRIFT_ENVIRONMENT.join(", ")}.`,
  ),
  parameters: z.record(z.string(), z.json()).default({}).describe(
    "Free-form values for the program (numbers, texts, lists, maps), reached by {param.<path>} placeholders. " +
      "Sweep them like any parameter, e.g. sweep.grid: { parameters.D: [0.1, 0.2] }. Units: the program's.",
  ),
  output: outputSchema,
  units: tracks.units,
  timing: tracks.timing,
  timeoutSeconds: finitePositive().max(MAX_TIMEOUT_SECONDS, {
    message: `must be at most ${MAX_TIMEOUT_SECONDS} s (23 days)`,
  }).describe(
    "Wall-clock limit of one realisation's program run (unit: seconds of wall-clock time, s). After it the " +
      "program gets SIGTERM, then SIGKILL after killGraceSeconds, and the realisation fails with kind 'timeout'.",
  ),
  killGraceSeconds: finitePositive().max(3600, { message: "must be at most 3600 s" }).default(5).describe(
    "Time between SIGTERM and SIGKILL when a program is stopped for its time limit (unit: seconds, s).",
  ),
  workDirectory: z.string().min(1).default("spindrift-work").describe(
    "Folder holding the realisations' work folders (relative to the study file's folder, or absolute). " +
      "Realisation i runs in <workDirectory>/r<i>-<12 hex digits>, created empty for each attempt.",
  ),
  keepWorkFolders: z.enum(["failed", "always", "never"]).default("failed").describe(
    "Which work folders stay after a realisation: failed (default; to inspect), always, or never.",
  ),
};

type Ctx = z.core.$RefinementCtx;

/** Values shared by the check of both engines. */
interface CommonParams {
  readonly command: {
    readonly program: string;
    readonly args: readonly (string | number | boolean)[];
    readonly shell: boolean;
  };
  readonly inputFiles: readonly {
    readonly file: string;
    readonly template?: string;
    readonly text?: string;
  }[];
  readonly environment: Readonly<Record<string, string | number | boolean>>;
  readonly parameters: Readonly<Record<string, JsonValue>>;
  readonly output: { readonly file: string; readonly group?: string };
}

/** Why `name` cannot name a file inside the work folder, or null. */
export function fileNameProblem(name: string): string | null {
  if (name.startsWith("/")) return "must be relative to the work folder, not an absolute path";
  if (name.split("/").some((part) => part === "..")) return "must stay inside the work folder (no '..')";
  if (name.endsWith("/")) return "names a folder; give a file name";
  const bare = name.replace(/^(\.\/)+/, "");
  if (bare === STDOUT_LOG || bare === STDERR_LOG) {
    return `is where spindrift keeps the program's ${
      bare === STDOUT_LOG ? "standard output" : "standard error"
    }`;
  }
  return null;
}

function checkTemplate(
  ctx: Ctx,
  text: string,
  scope: PlaceholderScope,
  parameters: Readonly<Record<string, JsonValue>>,
  path: (string | number)[],
): void {
  for (const message of templateProblems(text, scope, parameters)) {
    ctx.addIssue({ code: "custom", path, message });
  }
}

function checkParameterKeys(ctx: Ctx, value: JsonValue, path: (string | number)[]): void {
  if (value === null || typeof value !== "object") return;
  if (Array.isArray(value)) {
    (value as readonly JsonValue[]).forEach((v, i) => checkParameterKeys(ctx, v, [...path, i]));
    return;
  }
  for (const [key, v] of Object.entries(value as Record<string, JsonValue>)) {
    if (!PARAMETER_KEY.test(key)) {
      ctx.addIssue({
        code: "custom",
        path: [...path, key],
        message: `'${key}' cannot be reached by a {param.…} placeholder: use letters, digits, '_' and '-'`,
      });
    }
    checkParameterKeys(ctx, v, [...path, key]);
  }
}

function checkCommon(p: CommonParams, ctx: Ctx): void {
  const issue = (path: (string | number)[], message: string) =>
    ctx.addIssue({ code: "custom", path, message });
  const params = p.parameters;
  checkParameterKeys(ctx, params as JsonValue, ["parameters"]);

  const cmd = p.command;
  if (cmd.shell) checkTemplate(ctx, cmd.program, "full", params, ["command", "program"]);
  else {
    const names = placeholderNames(cmd.program);
    if (names.length > 0) {
      issue(
        ["command", "program"],
        `{${names[0]}}: the program is named as written (the launcher allows running exactly it); put ` +
          "placeholders in command.args, or sweep command.program to run several programs",
      );
    }
  }
  cmd.args.forEach((a, i) => {
    if (typeof a === "string") checkTemplate(ctx, a, "full", params, ["command", "args", i]);
  });

  const outputProblem = fileNameProblem(p.output.file);
  if (outputProblem !== null) issue(["output", "file"], `'${p.output.file}' ${outputProblem}`);
  checkTemplate(ctx, p.output.file, "name", params, ["output", "file"]);
  if (p.output.group !== undefined) checkTemplate(ctx, p.output.group, "name", params, ["output", "group"]);

  const seen = new Map<string, number>();
  p.inputFiles.forEach((f, i) => {
    if ((f.template === undefined) === (f.text === undefined)) {
      issue(
        ["inputFiles", i],
        "give exactly one of template (a file to fill in) and text (the template inline)",
      );
    }
    const problem = fileNameProblem(f.file);
    if (problem !== null) issue(["inputFiles", i, "file"], `'${f.file}' ${problem}`);
    checkTemplate(ctx, f.file, "name", params, ["inputFiles", i, "file"]);
    if (f.text !== undefined) checkTemplate(ctx, f.text, "full", params, ["inputFiles", i, "text"]);
    const bare = f.file.replace(/^(\.\/)+/, "");
    const before = seen.get(bare);
    if (before !== undefined) {
      issue(["inputFiles", i, "file"], `'${f.file}' is already written by inputFiles[${before}]`);
    } else seen.set(bare, i);
    if (bare === p.output.file.replace(/^(\.\/)+/, "")) {
      issue(
        ["inputFiles", i, "file"],
        `'${f.file}' is also the output file; the program must write its output anew`,
      );
    }
  });

  for (const [name, value] of Object.entries(p.environment)) {
    if (!ENV_NAME.test(name)) {
      issue(
        ["environment", name],
        `'${name}' is not a variable name: letters, digits and '_', not starting with a digit`,
      );
    } else if ((SPINDRIFT_ENVIRONMENT as readonly string[]).includes(name)) {
      issue(["environment", name], `${name} is set by spindrift itself for every realisation`);
    }
    if (typeof value === "string") checkTemplate(ctx, value, "full", params, ["environment", name]);
  }
}

/** Runs the imported-data schema on the output part, reporting its issues at this engine's paths. */
function checkOutput(
  // deno-lint-ignore no-explicit-any
  schema: z.ZodType<any>,
  value: Record<string, unknown>,
  p: CommonParams,
  ctx: Ctx,
): void {
  let file: string;
  try {
    file = renderTemplate(p.output.file, {
      seed: "0",
      seed32: "0",
      index: 0,
      run: { duration: 1, sampleInterval: 1, tolerance: 1e-9, maxDistance: 1 },
      parameters: p.parameters,
    });
  } catch {
    return; // reported by the placeholder check
  }
  const { file: _file, ...rest } = value.output as Record<string, unknown>;
  const imported = { ...value, source: { file, ...rest } };
  delete (imported as Record<string, unknown>).output;
  const result = schema.safeParse(imported);
  if (result.success) return;
  for (const i of result.error.issues) {
    const path = i.path[0] === "source" ? ["output", ...i.path.slice(1)] : [...i.path];
    ctx.addIssue({
      code: "custom",
      path: path as (string | number)[],
      message: i.message.replaceAll("source.files", "output.file").replaceAll("source.", "output."),
    });
  }
}

const OUTPUT_KEYS_2D = ["output", "columns", "units", "timing"] as const;
const OUTPUT_KEYS_3D = [...OUTPUT_KEYS_2D, "coreRadius", "markersWithoutColumn"] as const;

function pick(value: Record<string, unknown>, keys: readonly string[]): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const k of keys) if (value[k] !== undefined) out[k] = value[k];
  return out;
}

/** The `parameters` schema of `external-program-2d` (2D point-vortex tracks written by a program). */
export const external2dParamsSchema = z.object({
  ...common,
  columns: tracks.columns,
}).strict().superRefine((p, ctx) => {
  checkCommon(p, ctx);
  checkOutput(tracks2dParamsSchema, pick(p, OUTPUT_KEYS_2D), p, ctx);
});

/** The `parameters` schema of `external-program-3d` (3D vortex-filament snapshots written by a program). */
export const external3dParamsSchema = z.object({
  ...common,
  columns: filaments.columns,
  markersWithoutColumn: filaments.markersWithoutColumn,
  coreRadius: filaments.coreRadius,
}).strict().superRefine((p, ctx) => {
  checkCommon(p, ctx);
  checkOutput(filaments3dParamsSchema, pick(p, OUTPUT_KEYS_3D), p, ctx);
});

export type External2dParams = z.output<typeof external2dParamsSchema>;
export type External3dParams = z.output<typeof external3dParamsSchema>;
export type ExternalParams = External2dParams | External3dParams;
