/**
 * What the first realisation of a study would do, in the engine's own words (e.g. the exact command an
 * external program runs), for `spindrift check`. Nothing is run or written.
 *
 * @example
 * ```ts
 * const first = await describeFirstRealisation(study);
 * if ("lines" in first) for (const line of first.lines) console.log(line);
 * ```
 */
import { EngineFailure } from "../engines/contract.ts";
import { findEngine } from "../engines/registry.ts";
import { RandomStream } from "../engines/random.ts";
import type { NormalizedStudy } from "./normalize.ts";
import { deriveSeedState } from "./seeds.ts";
import { taskFor } from "./runner.ts";

/** The engine's description of a realisation, or why it could not start. */
export type RealisationDescription = { readonly lines: readonly string[] } | { readonly problem: string };

/**
 * The engine's description of realisation 0 of parameter point 0 (no lines when the engine has no
 * `describeRealisation`), or the reason that realisation could not start (a missing program or template).
 */
export async function describeFirstRealisation(study: NormalizedStudy): Promise<RealisationDescription> {
  const engine = findEngine(study.engine.id);
  if (engine?.describeRealisation === undefined || study.points.length === 0) return { lines: [] };
  const point = study.points[0];
  const seedState = deriveSeedState(study.seed, point.paramsHash, 0);
  const task = taskFor(study, {
    key: "",
    pointIndex: 0,
    pointHash: point.pointHash,
    index: 0,
    seedState,
    seedHex: "",
  });
  try {
    const lines = await engine.describeRealisation({
      params: task.params,
      controls: task.controls,
      rng: RandomStream.fromState(seedState),
      realisationIndex: 0,
      baseDirectory: task.baseDirectory,
    });
    return { lines };
  } catch (e) {
    if (e instanceof EngineFailure) return { problem: e.message };
    throw e;
  }
}
