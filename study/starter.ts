/**
 * Starter study files: `spindrift new <engine>` writes a commented study for any registered engine that has an
 * `EngineStarter` (engines/contract.ts). The study-wide sections (name, description, realisations, seed, run,
 * observables with the classification thresholds) are written here, the engine's `parameters` and `sweep` come
 * from its starter. Every starter passes `spindrift check` as written (tested for every engine in the registry).
 *
 * @example
 * ```ts
 * import { findEngine } from "../engines/registry.ts";
 * const text = starterStudy(findEngine("point-vortex-2d")!, { name: "my-study", file: "my-study.yaml", seed: 7 });
 * ```
 */
import type { Engine } from "../engines/contract.ts";
import { DEFAULT_CLASSIFICATION } from "../engines/observables/mod.ts";
import { ENGINES } from "../engines/registry.ts";
import { classificationSchema, OBSERVABLE_IDS } from "./schema.ts";

/** Options of `starterStudy`. */
export interface StarterOptions {
  /** The study's name (letters, digits, - and _): it names the database and the report. */
  readonly name: string;
  /** The file the study is written to, as the user will type it (for the "next steps" comment). */
  readonly file: string;
  /** Master seed written into the file (engines that draw no random numbers get none). */
  readonly seed: number;
}

const WIDTH = 110;

/** Text as comment lines of at most WIDTH characters, each starting with `indent` + "# ". */
function comment(text: string, indent = ""): string {
  const out: string[] = [];
  let line = "";
  for (const word of text.split(/\s+/).filter((w) => w !== "")) {
    if (line !== "" && indent.length + 2 + line.length + 1 + word.length > WIDTH) {
      out.push(line);
      line = word;
    } else line = line === "" ? word : `${line} ${word}`;
  }
  if (line !== "") out.push(line);
  return out.map((l) => `${indent}# ${l}`).join("\n");
}

function indented(yaml: string, by = "  "): string {
  return yaml.trimEnd().split("\n").map((l) => (l === "" ? l : by + l)).join("\n");
}

/** A YAML number as a person writes it (1.0e-4 rather than 0.0001). */
function yamlNumber(x: number): string {
  if (x !== 0 && (Math.abs(x) < 1e-3 || Math.abs(x) >= 1e6)) {
    const [m, e] = x.toExponential().split("e");
    return `${m.includes(".") ? m : `${m}.0`}e${e.startsWith("+") ? e.slice(1) : e}`;
  }
  return String(x);
}

/** Engines that have a starter, in registry order. */
// deno-lint-ignore no-explicit-any
export function starterEngines(): Engine<any>[] {
  return ENGINES.filter((e) => e.starter !== undefined);
}

/**
 * The commented study file for `engine`.
 * @throws RangeError when the engine has no starter.
 */
// deno-lint-ignore no-explicit-any
export function starterStudy(engine: Engine<any>, opts: StarterOptions): string {
  const s = engine.starter;
  if (s === undefined) throw new RangeError(`engine ${engine.id} has no starter study`);
  const db = `${opts.name}.sqlite`;
  const classification = classificationSchema.shape;
  const thresholds = (Object.keys(DEFAULT_CLASSIFICATION) as (keyof typeof DEFAULT_CLASSIFICATION)[])
    .map((k) =>
      `${comment(classification[k].description ?? "", "    ")}\n    ${k}: ${
        yamlNumber(DEFAULT_CLASSIFICATION[k])
      }`
    )
    .join("\n");
  const parts = [
    comment(`${opts.file}: a starter study for the engine ${engine.id}: ${engine.title}.`),
    comment(s.about),
    "#",
    comment(
      `Next: spindrift check ${opts.file} (every problem at once, with line numbers), spindrift run ${opts.file}, ` +
        `spindrift analyse ${db}, spindrift report ${db}. Every field, with its unit and default, is described ` +
        "in spindrift's study/schema.json (point your editor's YAML plugin at it); README.md explains the " +
        "words (realisation, parameter point, main cluster, window rule) and the units.",
    ),
    `name: ${opts.name} # names the database (${db}) and the report`,
    "description: > # the question the study answers: the report shows it at the top",
    indented(s.question.replace(/(.{1,100})(\s|$)/g, "$1\n")),
    `engine: ${engine.id}`,
    "parameters:",
    indented(s.parameters),
  ];
  if (s.sweep !== undefined) {
    parts.push(
      "sweep: # parameters to vary, as dotted paths inside `parameters`; each setting is one parameter point",
      indented(s.sweep),
    );
  }
  parts.push(
    `realisations: ${s.realisations} # independent realisations per parameter point; the analysis needs ≥ 20 ` +
      "(50+ preferred)",
  );
  if (engine.usesSeed !== false) {
    parts.push(
      `seed: ${opts.seed} # master seed: every realisation's random stream is hashed from it and its point`,
    );
  } else {
    parts.push("# seed: 1  # not needed: this engine draws no random numbers");
  }
  parts.push(
    "run:",
    `  duration: ${yamlNumber(s.run.duration)} # simulated time of each realisation, in ${s.run.unit}`,
    `  sampleInterval: ${yamlNumber(s.run.sampleInterval)} # time between stored frames, in ${s.run.unit}`,
    "  # workers: 2  # parallel workers (default: all cores); results do not depend on it",
    "observables:",
    `  record: [${OBSERVABLE_IDS.join(", ")}] # what to measure on every realisation`,
    comment(
      "The thresholds that tell evaporating dipoles (2D) or rings (3D) and stray objects from the main " +
        "cluster (the defaults are written out). Fix them before looking at D; the report shows D with each " +
        "one halved and doubled. docs/methods.md §4 explains them." +
        (s.classification ? ` ${s.classification}` : ""),
      "  ",
    ),
    "  classification:",
    thresholds,
  );
  return parts.join("\n") + "\n";
}
