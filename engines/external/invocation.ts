/**
 * From validated parameters and a realisation to the exact invocation: the executable (resolved to an absolute
 * path), the argument vector, the environment additions, the work folder, the rendered input files and the
 * output path. Pure apart from reading template files and looking the program up on PATH; nothing is written or
 * run here, so `spindrift check` can show the invocation of realisation 0 exactly as `run` will perform it.
 *
 * Work folder: `<workDirectory>/r<index>-<h>`, with `workDirectory` relative to the study file's folder and `h`
 * the first 12 hex digits of SHA-256 over (engine id, parameters, run controls, program seed, index). The name is
 * the same on every attempt of a realisation (an attempt cut short by a kill is wiped by the next one) and
 * differs between realisations, parameter points and study revisions, so realisations never share a folder.
 *
 * Program lookup: a program name without '/' is searched on PATH (first executable regular file); a path is
 * resolved against the study file's folder. With `command.shell: true` the executable is /bin/sh and the
 * command line is passed with `-c`; placeholder values in it are single-quoted, and `command.args` become its
 * positional parameters $1, $2, …
 *
 * @example
 * ```ts
 * const inv = await prepareInvocation("external-program-2d", input);
 * commandLine(inv.argv); // "/usr/bin/node /study/walker.mjs --seed 1375… --out /study/spindrift-work/r0-…"
 * ```
 */
import { createHash } from "node:crypto";
import { join, resolve } from "node:path";
import { EngineFailure, type EngineRunInput, type JsonValue } from "../contract.ts";
import { type ExternalParams, fileNameProblem } from "./params.ts";
import { resolveProgram, SHELL, shellQuote } from "./program_path.ts";
import { PlaceholderError, type PlaceholderValues, renderTemplate } from "./placeholders.ts";
import { type ProgramSeed, programSeed } from "./program_seed.ts";

/** One generated input file. */
export interface InputFile {
  /** Name inside the work folder (placeholders rendered). */
  readonly name: string;
  /** Its content (placeholders rendered). */
  readonly content: string;
  /** Where the template came from, for messages: "inline text" or the template file's path. */
  readonly source: string;
}

/** Everything needed to run one realisation's program, and to record exactly what ran. */
export interface Invocation {
  /** `command.program` as written in the study. */
  readonly program: string;
  /** `command.version`, when given. */
  readonly version: string | undefined;
  /** The argument vector exactly as started: argv[0] is the absolute path of the executable. */
  readonly argv: readonly string[];
  /** Variables added to spindrift's environment (SPINDRIFT_* first, then the study's, in its order). */
  readonly environment: Readonly<Record<string, string>>;
  /** Absolute path of the realisation's work folder (the program's working directory). */
  readonly workFolder: string;
  readonly inputFiles: readonly InputFile[];
  /** Absolute path of the output file. */
  readonly outputFile: string;
  /** HDF5 group of the output (placeholders rendered), when set. */
  readonly outputGroup: string | undefined;
  readonly seed: ProgramSeed;
  readonly index: number;
  /** True when the command line runs through /bin/sh (`command.shell`). */
  readonly shell: boolean;
}

/** Name of realisation `index`'s work folder (see the module documentation). */
export function workFolderName(
  engineId: string,
  input: Pick<EngineRunInput<ExternalParams>, "params" | "controls">,
  seed: ProgramSeed,
  index: number,
): string {
  const { duration, sampleInterval, tolerance, maxDistance } = input.controls;
  const text = JSON.stringify([
    "spindrift-external-workfolder-v1",
    engineId,
    input.params,
    [duration, sampleInterval, tolerance, maxDistance],
    seed.text,
    index,
  ]);
  return `r${index}-${createHash("sha256").update(text, "utf8").digest("hex").slice(0, 12)}`;
}

function setupFailure(message: string): never {
  throw new EngineFailure("invalid-state", message);
}

function render(
  text: string,
  values: PlaceholderValues,
  where: string,
  quote?: (v: string) => string,
): string {
  try {
    return renderTemplate(text, values, quote);
  } catch (e) {
    if (e instanceof PlaceholderError) setupFailure(`${where}: ${e.message}`);
    throw e;
  }
}

function renderFileName(name: string, values: PlaceholderValues, where: string): string {
  const rendered = render(name, values, where);
  const problem = fileNameProblem(rendered);
  if (problem !== null) setupFailure(`${where}: '${rendered}' (from '${name}') ${problem}`);
  return rendered.replace(/^(\.\/)+/, "");
}

async function readTemplate(path: string, display: string): Promise<string> {
  try {
    return await Deno.readTextFile(path);
  } catch (e) {
    if (e instanceof Deno.errors.NotFound) {
      setupFailure(`cannot read the input template '${display}' (${path}): no such file`);
    }
    if (e instanceof Deno.errors.IsADirectory) {
      setupFailure(`cannot read the input template '${display}': it is a folder`);
    }
    setupFailure(`cannot read the input template '${display}' (${path}): ${(e as Error).message}`);
  }
}

/**
 * The invocation of realisation `input.realisationIndex` (default 0). Draws the program seed from `input.rng`
 * (its first two uniforms) and reads template files; runs and writes nothing.
 *
 * @throws EngineFailure "invalid-state" for a template that cannot be read or filled, "program-failed" for a
 * program that cannot be found.
 */
export async function prepareInvocation(
  engineId: string,
  input: EngineRunInput<ExternalParams>,
): Promise<Invocation> {
  const p = input.params;
  const seed = programSeed(input.rng);
  const index = input.realisationIndex ?? 0;
  const studydir = resolve(input.baseDirectory ?? ".");
  const workFolder = join(resolve(studydir, p.workDirectory), workFolderName(engineId, input, seed, index));
  const parameters = p.parameters as Readonly<Record<string, JsonValue>>;
  const nameValues: PlaceholderValues = {
    seed: seed.text,
    seed32: seed.text32,
    index,
    run: input.controls,
    parameters,
  };
  const outputName = renderFileName(p.output.file, nameValues, "output.file");
  const outputFile = join(workFolder, outputName);
  const outputGroup = p.output.group === undefined
    ? undefined
    : render(p.output.group, nameValues, "output.group");
  const values: PlaceholderValues = { ...nameValues, output: outputFile, workdir: workFolder, studydir };

  const args = p.command.args.map((a, i) => render(String(a), values, `command.args[${i}]`));
  let argv: string[];
  if (p.command.shell) {
    const script = render(p.command.program, values, "command.program", shellQuote);
    argv = [SHELL, "-c", script, "sh", ...args];
  } else {
    const found = resolveProgram(p.command.program, studydir);
    if ("problem" in found) throw new EngineFailure("program-failed", found.problem);
    argv = [found.path, ...args];
  }

  const environment: Record<string, string> = {
    SPINDRIFT_SEED: seed.text,
    SPINDRIFT_SEED32: seed.text32,
    SPINDRIFT_INDEX: String(index),
    SPINDRIFT_WORKDIR: workFolder,
    SPINDRIFT_OUTPUT: outputFile,
  };
  for (const [name, value] of Object.entries(p.environment)) {
    environment[name] = render(String(value), values, `environment.${name}`);
  }

  const inputFiles: InputFile[] = [];
  for (const [i, f] of p.inputFiles.entries()) {
    const name = renderFileName(f.file, nameValues, `inputFiles[${i}].file`);
    if (f.text !== undefined) {
      inputFiles.push({
        name,
        content: render(f.text, values, `inputFiles[${i}].text`),
        source: "inline text",
      });
    } else {
      const template = f.template as string;
      const path = resolve(studydir, template);
      const text = await readTemplate(path, template);
      inputFiles.push({
        name,
        content: render(text, values, `input template ${template}`),
        source: template,
      });
    }
  }
  if (inputFiles.some((f) => f.name === outputName)) {
    setupFailure(`output.file '${outputName}' is also an input file; the program must write its output anew`);
  }
  return {
    program: p.command.program,
    version: p.command.version,
    argv,
    environment,
    workFolder,
    inputFiles,
    outputFile,
    outputGroup,
    seed,
    index,
    shell: p.command.shell,
  };
}
