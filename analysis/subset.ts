/**
 * The diffusion answer of a parameter point computed on any subset of its realisations, exactly as `analyse`
 * computes it (stored tracks → prepared sums → the loss-aware rule of `estimators/diffusion.ts`, with the
 * quarter-domain cut): what a pilot projects from, what `run --until D=…` plans with and what the numerical
 * audit compares. Works on any study database, including an audit's own.
 *
 * @example
 * ```ts
 * const ev = subsetDiffusion(db, { engineId, params, dimension: 2 }, ids, { seed: "pilot/ab12/diffusion" });
 * if (ev.status === "ok") console.log(ev.answer!.D, ev.estimators.cohort!.ci?.standardError);
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import { type DiffusionEvidence, diffusionEvidence } from "./estimators/diffusion.ts";
import { prepareTracks } from "./estimators/tracks.ts";
import { domainCut } from "./from_store/series.ts";
import { readStoredTracks } from "./from_store/tracks.ts";

/** Where the realisations come from: the point's engine and parameters, and the dimension. */
export interface SubsetPoint {
  readonly engineId: string;
  readonly params: unknown;
  readonly dimension: 2 | 3;
}

/**
 * The diffusion evidence of realisations `ids` (null when fewer than 3 frames are stored; the evidence says
 * "no diffusive regime" with the reasons otherwise).
 */
export function subsetDiffusion(
  db: DatabaseSync,
  point: SubsetPoint,
  ids: readonly number[],
  opts: { readonly seed: string; readonly replicates?: number; readonly level?: number },
): DiffusionEvidence | null {
  if (ids.length === 0) return null;
  const tracks = readStoredTracks(db, ids, { dimension: point.dimension });
  if (tracks.ensemble.t.length < 3) return null;
  const cut = domainCut(db, ids, { engineId: point.engineId, params: point.params });
  return diffusionEvidence(prepareTracks(tracks.ensemble), {
    seed: opts.seed,
    replicates: opts.replicates ?? 2000,
    level: opts.level ?? 0.95,
    tCut: cut.tCut ?? undefined,
  });
}
