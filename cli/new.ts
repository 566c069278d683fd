/** `spindrift new ENGINE [FILE]`: writes a commented starter study (study/starter.ts) for an engine. */
import { basename } from "node:path";
import { findEngine } from "../engines/registry.ts";
import { suggest } from "../study/problems.ts";
import { starterEngines, starterStudy } from "../study/starter.ts";
import { UserError } from "./errors.ts";

const NAME = /^[A-Za-z0-9][A-Za-z0-9_-]*$/;

/** A study name from a file name: `runs/film v2.yaml` → `film-v2`. */
export function nameFromFile(file: string): string {
  const stem = basename(file).replace(/\.(ya?ml)$/i, "").replace(/[^A-Za-z0-9_-]+/g, "-").replace(
    /^[-_]+/,
    "",
  );
  return stem === "" ? "my-study" : stem.slice(0, 80);
}

/** Writes the starter (or prints it for file "-"); returns the exit code. */
export async function newStudyCommand(
  engineId: string,
  file: string,
  opts: { readonly name?: string; readonly force?: boolean },
  write: (line: string) => void,
): Promise<number> {
  const ids = starterEngines().map((e) => e.id);
  const engine = findEngine(engineId);
  if (engine?.starter === undefined) {
    const hint = suggest(engineId, ids);
    throw new UserError(
      `there is no engine '${engineId}'${hint ? `; did you mean ${hint}?` : ""}`,
      `engines with a starter: ${ids.join(", ")}`,
    );
  }
  const name = opts.name ?? nameFromFile(file === "-" ? "my-study" : file);
  if (!NAME.test(name)) {
    throw new UserError(
      `--name '${name}' is not a study name`,
      "use letters, digits, '-' and '_' (e.g. film-patch)",
    );
  }
  const seed = crypto.getRandomValues(new Uint32Array(1))[0] % 1_000_000_000;
  const shown = file === "-" ? `${name}.yaml` : file;
  const text = starterStudy(engine, { name, file: shown, seed });
  if (file === "-") {
    await Deno.stdout.write(new TextEncoder().encode(text));
    return 0;
  }
  try {
    await Deno.writeTextFile(file, text, { createNew: !opts.force });
  } catch (e) {
    if (e instanceof Deno.errors.AlreadyExists) {
      throw new UserError(
        `${file} exists already`,
        "choose another file name, or add --force to overwrite it",
      );
    }
    if (e instanceof Deno.errors.NotFound) {
      throw new UserError(`cannot write ${file}: its folder does not exist`);
    }
    throw e;
  }
  write(`wrote ${file}: a starter study for ${engine.id} (study name ${name}); read its comments, then`);
  write(`  spindrift check ${file}`);
  write(`  spindrift run ${file}`);
  return 0;
}
