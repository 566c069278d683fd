/**
 * The ensemble analysis of a stored study: from the realisations in the database to answers with honest
 * intervals, stored back in `ensemble_results`. Nothing here reruns an engine. The folder reads in the order
 * the data flows:
 *
 * ```
 * from_store/   stored frames and series → estimator inputs (the only part that reads the database, besides
 *               the writer below): series alignment, replay of frames through the classifier, radial profiles
 *               on common bins, the χ₂ of a decay study, what the analysis must know of engines
 * estimators/   pure numerics, callable on any subset of realisations: bootstrap, MSD fits, the Vinen
 *               equation, velocity correlations, evaporation, synthetic data with known answers
 * to_store/     estimates → `ensemble_results` rows (names documented in DEVELOPERS.md)
 * analyse.ts    the orchestration: per parameter point, read → estimate → rows; one transaction at the end
 * ```
 *
 * Imports: analysis → store, engines (contract, observables for the replay, registry, random streams);
 * `estimators/` imports nothing but `engines/random.ts` and npm packages. study/ and reports/ never import
 * analysis/ except `reports/` using the pure quantile functions of `estimators/`.
 *
 * @example
 * ```ts
 * import { analyseStudy } from "./mod.ts";
 * const summary = await analyseStudy("runs/film-patch.sqlite", { replicates: 2000 });
 * ```
 *
 * A pilot or an audit reruns the estimators on subsets of a point's realisations without rereading frames:
 * ```ts
 * import { readStoredTracks } from "./mod.ts";
 * import { diffusionEvidence, prepareTracks } from "./estimators/mod.ts";
 * const prepared = prepareTracks(readStoredTracks(db, ids, { dimension: 2 }).ensemble);
 * const a = diffusionEvidence(prepared, { seed: "audit/a", realisations: evenIndices });
 * const b = diffusionEvidence(prepared, { seed: "audit/b", realisations: oddIndices });
 * ```
 */
export * from "./analyse.ts";
export { AnalysisInputError } from "./errors.ts";
export { type Chi2Estimate, chi2FromDecayStudy } from "./from_store/decay.ts";
export { readProfileEnsemble } from "./from_store/profiles.ts";
export { readStoredTracks, type StoredTracks } from "./from_store/tracks.ts";
export { QUANTITIES, quantitiesFor, type QuantityInfo, readQuantities } from "./from_store/quantities.ts";
export { subsetDiffusion, type SubsetPoint } from "./subset.ts";
export type { Chi2Source } from "./options.ts";
export type { DiffusionAnalysis } from "./to_store/diffusion.ts";
export type { VinenAnalysis } from "./to_store/vinen.ts";
export type { EvaporationAnalysis } from "./to_store/evaporation.ts";
export { type InvariantsAnalysis, invariantsText } from "./to_store/invariants.ts";
