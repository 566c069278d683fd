/**
 * The launcher's permission step: which programs a `spindrift` command may start. spindrift runs under Deno
 * without permission to start programs; only a study that uses an external-program engine needs it, and then
 * only for the program it names. Before `spindrift run` (and any command that executes realisations) the
 * launcher runs this file with the same arguments; it prints `--allow-run=<absolute paths>` (or nothing), which
 * the launcher adds to the Deno command line. A study with `command.shell: true` is granted /bin/sh.
 *
 * Which arguments are studies: every argument not starting with '-' that names an existing .yaml/.yml file
 * whose `engine` is an external-program engine, and every .json file that is a cluster submission manifest
 * (`spindrift run-slice <manifest.json>`, what each array task runs): its frozen study copy (`studyFile`,
 * relative to the results folder, the manifest's grandparent folder) is read, and programs resolve against the
 * folder of the original study file (`sourcePath`), as the array task's engine resolves them. No command grammar
 * is assumed. Programs are looked up exactly as the engine does (`program_path.ts`), including swept values of
 * `command.program`, `command.shell` and `command`. A program that cannot be found is reported on stderr and
 * left out (its realisations then fail with that message).
 *
 * Usage (from the launcher): `deno run --allow-read --allow-env engines/external/allow_run.ts run study.yaml`.
 *
 * @example
 * ```ts
 * const found = studyPrograms(await Deno.readTextFile("walkers.yaml"), "walkers.yaml");
 * found?.programs; // ["/usr/bin/node"]
 * ```
 */
import { parse } from "yaml";
import { dirname, join, resolve } from "node:path";
import { EXTERNAL_ENGINE_IDS } from "./ids.ts";
import { resolveProgram, SHELL } from "./program_path.ts";

/** What one external-program study needs permission for. */
export interface StudyPrograms {
  /** Absolute paths of the executables it may start, sorted, without repeats. */
  readonly programs: readonly string[];
  /** Programs that could not be found (one message each). */
  readonly problems: readonly string[];
}

/** Study files larger than this are not considered (a study is a few kilobytes). */
const MAX_STUDY_BYTES = 4 << 20;

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

/** Every list of values a sweep section gives for `path` (grid and zip groups). */
function sweptValues(sweep: unknown, path: string): unknown[] {
  const out: unknown[] = [];
  if (!isRecord(sweep)) return out;
  const groups: unknown[] = [sweep.grid, ...(Array.isArray(sweep.zip) ? sweep.zip : [])];
  for (const g of groups) {
    if (isRecord(g) && Array.isArray(g[path])) out.push(...(g[path] as unknown[]));
  }
  return out;
}

/**
 * The programs an external-program study would start, or null when `text` is not such a study (not YAML, or
 * another engine). `studyPath` locates relative program paths.
 */
export function studyPrograms(text: string, studyPath: string): StudyPrograms | null {
  let doc: unknown;
  try {
    doc = parse(text, { logLevel: "error" }); // problems are reported by the study checker, not here
  } catch {
    return null;
  }
  if (!isRecord(doc) || typeof doc.engine !== "string" || !EXTERNAL_ENGINE_IDS.includes(doc.engine)) {
    return null;
  }
  const params = isRecord(doc.parameters) ? doc.parameters : {};
  const command = isRecord(params.command) ? params.command : {};
  const commands: Record<string, unknown>[] = [command];
  for (const c of sweptValues(doc.sweep, "command")) if (isRecord(c)) commands.push(c);
  const programs: unknown[] = commands.map((c) => c.program);
  programs.push(...sweptValues(doc.sweep, "command.program"));
  const shells: unknown[] = commands.map((c) => c.shell);
  shells.push(...sweptValues(doc.sweep, "command.shell"));
  const anyShell = shells.includes(true);
  const onlyShell = shells.length > 0 && shells.every((s) => s === true);
  const dir = dirname(resolve(studyPath));
  const found = new Set<string>();
  const problems: string[] = [];
  if (anyShell) found.add(SHELL);
  if (!onlyShell) {
    for (const p of programs) {
      if (typeof p !== "string" || p === "") continue;
      const r = resolveProgram(p, dir);
      if ("path" in r) found.add(r.path);
      else if (!anyShell) problems.push(r.problem);
    }
  }
  return { programs: [...found].sort(), problems };
}

/** Reads a text file of at most MAX_STUDY_BYTES, or null. */
async function readSmall(path: string): Promise<string | null> {
  try {
    const info = await Deno.stat(path);
    if (!info.isFile || info.size > MAX_STUDY_BYTES) return null;
    return await Deno.readTextFile(path);
  } catch {
    return null;
  }
}

/**
 * The study behind a command-line argument: a study file itself, or the frozen copy a cluster submission
 * manifest names (with the original study path, against which relative programs resolve). Null otherwise.
 */
async function studyOfArgument(arg: string): Promise<{ text: string; studyPath: string } | null> {
  if (/\.ya?ml$/i.test(arg)) {
    const text = await readSmall(arg);
    return text === null ? null : { text, studyPath: arg };
  }
  if (!/\.json$/i.test(arg)) return null;
  const json = await readSmall(arg);
  if (json === null) return null;
  let manifest: unknown;
  try {
    manifest = JSON.parse(json);
  } catch {
    return null;
  }
  if (
    !isRecord(manifest) || typeof manifest.studyFile !== "string" || typeof manifest.sourcePath !== "string"
  ) {
    return null;
  }
  const results = dirname(dirname(resolve(arg)));
  const text = await readSmall(join(results, manifest.studyFile));
  return text === null ? null : { text, studyPath: manifest.sourcePath };
}

/**
 * The Deno flag granting the programs of every external-program study among `args` ("" when none).
 *
 * @throws Error when a program's path contains a comma (the flag's list separator).
 */
export async function allowRunFlag(
  args: readonly string[],
  warn: (message: string) => void = () => {},
): Promise<string> {
  const all = new Set<string>();
  for (const arg of args) {
    if (arg.startsWith("-")) continue;
    const study = await studyOfArgument(arg);
    if (study === null) continue;
    const found = studyPrograms(study.text, study.studyPath);
    if (found === null) continue;
    for (const p of found.problems) warn(`${arg}: ${p}; its realisations will fail`);
    for (const p of found.programs) {
      if (p.includes(",")) {
        throw new Error(
          `${arg}: cannot grant permission to start '${p}': its path contains a comma; rename it or use a link`,
        );
      }
      all.add(p);
    }
  }
  return all.size === 0 ? "" : `--allow-run=${[...all].sort().join(",")}`;
}

if (import.meta.main) {
  try {
    const flag = await allowRunFlag(Deno.args, (m) => console.error(`spindrift: ${m}`));
    if (flag !== "") console.log(flag);
  } catch (e) {
    console.error(`spindrift: ${(e as Error).message}`);
    Deno.exit(1);
  }
}
