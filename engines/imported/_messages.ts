/** Message helpers shared by the readers (private). */
import { editDistance as distance } from "../_edit_distance.ts";
import { EngineFailure } from "../contract.ts";

/** Throws the failure every bad input becomes: the realisation fails with this message, others go on. */
export function fail(message: string): never {
  throw new EngineFailure("invalid-state", message);
}

/** " (did you mean 'X'?)" for the closest candidate (case-insensitive match first, then edit distance ≤ 2). */
export function didYouMean(name: string, candidates: readonly string[]): string {
  const lower = name.toLowerCase();
  const ci = candidates.find((c) => c.toLowerCase() === lower);
  if (ci !== undefined) return ` (did you mean '${ci}'?)`;
  let best = "";
  let bestD = 3;
  for (const c of candidates) {
    const d = distance(lower, c.toLowerCase());
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  return best === "" ? "" : ` (did you mean '${best}'?)`;
}

/** For a column the study may leave out: how to say the files have none. */
export function absentHint(param: string, optional: boolean): string {
  return optional ? `; set ${param}: null if the files have none` : "";
}

/** A list of names for messages, shortened after `max` entries. */
export function listNames(names: readonly string[], max = 12): string {
  const shown = names.slice(0, max).map((n) => `'${n}'`).join(", ");
  return names.length > max ? `${shown}, … (${names.length} in all)` : shown;
}

/** Opens a data file for reading, turning file-system errors into clear failures. */
export async function openDataFile(path: string, display: string): Promise<Deno.FsFile> {
  await checkDataFile(path, display);
  try {
    return await Deno.open(path, { read: true });
  } catch (e) {
    return fileError(e, path, display);
  }
}

/** Checks that `path` is a readable regular file (clear failure otherwise). */
export async function checkDataFile(path: string, display: string): Promise<void> {
  let info: Deno.FileInfo;
  try {
    info = await Deno.stat(path);
  } catch (e) {
    fileError(e, path, display);
  }
  if (!info.isFile) fail(`cannot read '${display}': it is a directory, not a data file`);
}

function fileError(e: unknown, path: string, display: string): never {
  if (e instanceof Deno.errors.NotFound) {
    fail(`cannot open '${display}': no such file${path === display ? "" : ` (looked for ${path})`}`);
  }
  if (e instanceof Deno.errors.PermissionDenied || e instanceof Deno.errors.NotCapable) {
    fail(`cannot open '${display}': no permission to read it (${(e as Error).message})`);
  }
  fail(`cannot open '${display}': ${(e as Error)?.message ?? String(e)}`);
}
