/**
 * Finding the program a study names, and writing command lines for people: shared by the engines, by
 * `spindrift check` (through the engines' `describeRealisation`) and by the launcher's permission step
 * (`allow_run.ts`), so the program granted, shown and started is the same absolute path. Light on purpose (no
 * zod, no readers): the launcher runs it before every `spindrift run`.
 *
 * Lookup: a program containing '/' is a path, resolved against the study file's folder; a bare name is searched
 * in the PATH folders (absolute entries only; the first executable regular file wins). Symbolic links are kept
 * as they are.
 *
 * @example
 * ```ts
 * resolveProgram("node", "/studies"); // { path: "/usr/bin/node" }
 * commandLine(["/usr/bin/node", "walker.mjs", "it's"]); // "/usr/bin/node walker.mjs 'it'\''s'"
 * ```
 */
import { delimiter, isAbsolute, join, resolve } from "node:path";

/** The shell used when a study sets `command.shell: true`. */
export const SHELL = "/bin/sh";

/** Result of looking a program up: its absolute path, or why it cannot be run. */
export type ProgramLookup = { readonly path: string } | { readonly problem: string };

function executableFile(path: string): boolean {
  try {
    const info = Deno.statSync(path);
    return info.isFile && (info.mode === null || (info.mode & 0o111) !== 0);
  } catch {
    return false;
  }
}

function pathVariable(): string {
  try {
    return Deno.env.get("PATH") ?? "";
  } catch {
    return "";
  }
}

/**
 * The absolute path of `program`: a path (containing '/') resolved against `studyDirectory`, or a name searched
 * on PATH. Symbolic links are not resolved, so the path is the one the launcher grants.
 */
export function resolveProgram(
  program: string,
  studyDirectory: string,
  path = pathVariable(),
): ProgramLookup {
  if (program.includes("/")) {
    const abs = resolve(studyDirectory, program);
    if (executableFile(abs)) return { path: abs };
    let why = "no such file";
    try {
      const info = Deno.statSync(abs);
      why = info.isFile
        ? "the file is not executable (chmod +x, or run it through its interpreter)"
        : "not a file";
    } catch (e) {
      if (!(e instanceof Deno.errors.NotFound)) why = (e as Error).message;
    }
    return { problem: `cannot run '${program}' (${abs}): ${why}` };
  }
  const dirs = [...new Set(path.split(delimiter).filter((d) => d !== "" && isAbsolute(d)))];
  for (const dir of dirs) {
    const candidate = join(dir, program);
    if (executableFile(candidate)) return { path: candidate };
  }
  return {
    problem:
      `program '${program}' is not on PATH (searched ${dirs.length} folder${dirs.length === 1 ? "" : "s"}` +
      `${
        dirs.length > 0 ? `: ${dirs.slice(0, 6).join(", ")}${dirs.length > 6 ? ", …" : ""}` : ""
      }); install it ` +
      "or give its path",
  };
}

/** POSIX shell quoting: the text unchanged when it is safe, else in single quotes ('it'\''s'). */
export function shellQuote(text: string): string {
  if (text !== "" && /^[A-Za-z0-9_@%+=:,./-]+$/.test(text)) return text;
  return `'${text.replaceAll("'", `'\\''`)}'`;
}

/** The argument vector as one copy-and-paste command line (each word shell-quoted). */
export function commandLine(argv: readonly string[]): string {
  return argv.map(shellQuote).join(" ");
}

/** The environment additions as `NAME=value` words for a command line. */
export function environmentWords(environment: Readonly<Record<string, string>>): string[] {
  return Object.entries(environment).map(([k, v]) => `${k}=${shellQuote(v)}`);
}
