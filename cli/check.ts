/**
 * `spindrift check --json`: what `check` finds, as one JSON object on standard output (for editors, scripts and
 * notebooks). The shape (documented in README.md, "Machine-readable output"; tested in check_test.ts):
 *
 * ```json
 * { "file": "film.yaml", "ok": true,
 *   "problems": [], "warnings": [ { "file", "line", "column", "path", "value"?, "message", "code" } ],
 *   "study": { "name", "description", "hash", "engine": { "id", "version" }, "realisations", "seed",
 *              "runs", "points": [ { "index", "label", "varied", "pointHash" } ],
 *              "run": { "duration", "sampleInterval", "tolerance", "maxDistance" }, "observables": [ … ],
 *              "units": { "length", "time", "circulation", "kappa"?, "kappaUnits", "diffusion", "lines" },
 *              "firstRealisation": { "lines": [ … ] } | { "problem": "…" } } }
 * ```
 *
 * `ok` is false when there are problems (then `study` is absent) or when the first realisation could not start
 * (`study.firstRealisation.problem`); the exit code is then 1.
 */
import { resolve } from "node:path";
import { loadStudy } from "../study/load.ts";
import { normalizeStudy } from "../study/normalize.ts";
import { describeFirstRealisation } from "../study/describe.ts";
import { describeUnits } from "../study/units.ts";
import type { StudyProblem } from "../study/problems.ts";

/** The `check --json` object. */
export interface CheckReport {
  readonly file: string;
  readonly ok: boolean;
  readonly problems: readonly StudyProblem[];
  readonly warnings: readonly StudyProblem[];
  readonly study?: Record<string, unknown>;
}

/** Checks a study file as `spindrift check` does and returns the report (nothing is run or written). */
export async function checkReport(path: string): Promise<CheckReport> {
  const loaded = await loadStudy(path);
  if (!loaded.ok) {
    return { file: path, ok: false, problems: loaded.problems, warnings: loaded.warnings ?? [] };
  }
  const study = normalizeStudy(loaded.study, { text: loaded.text, sourcePath: resolve(path) });
  const first = await describeFirstRealisation(study);
  return {
    file: path,
    ok: !("problem" in first),
    problems: [],
    warnings: loaded.warnings,
    study: {
      name: study.name,
      description: study.description,
      hash: study.hash,
      engine: study.engine,
      realisations: study.realisations,
      seed: study.seed,
      runs: study.points.length * study.realisations,
      points: study.points.map((p) => ({
        index: p.index,
        label: p.label,
        varied: p.varied,
        pointHash: p.pointHash,
      })),
      run: {
        duration: study.run.duration,
        sampleInterval: study.run.sampleInterval,
        tolerance: study.run.tolerance,
        maxDistance: study.run.maxDistance,
      },
      observables: study.observables.record,
      units: describeUnits(study),
      firstRealisation: first,
    },
  };
}
