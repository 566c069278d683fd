/**
 * Ensemble analysis numerics: pure functions from per-realisation series to answers with intervals.
 *
 * - `fitDiffusion`, `thresholdSensitivity` — D from MSD ensembles (crossover, window, bootstrap, D_R).
 * - `bootstrap`, `percentileInterval`, `bcaInterval`, `jackknife` — generic bootstrap over realisations.
 * - `chiSquareDiffusionInterval` — exact χ² interval for D from independent Brownian increments.
 * - `VinenSolver`, `fitVinenDiffusion`, `fitVinenDecay`, `vinenChi2Sensitivity` — radial Vinen-type equation.
 * - `velocityCorrelations`, `VelocityCorrelationAccumulator` — f(r), g(r) from probe velocities.
 * - `walkerEnsemble` and the track generators — synthetic data with known D.
 * - `streamFromSeed` — reproducible streams from recorded seed strings.
 *
 * @example
 * ```ts
 * import { fitDiffusion, logTimes, walkerEnsemble } from "./mod.ts";
 * const ens = walkerEnsemble(
 *   { kind: "brownian", dimension: 3, walkers: 50, D: 0.5, times: logTimes(0.01, 10, { count: 31 }) },
 *   { realisations: 30, seed: "example" },
 * );
 * const fit = fitDiffusion(ens, { dimension: 3, seed: "example/bootstrap" });
 * console.log(fit.status, fit.D, fit.ci?.percentile);
 * ```
 */
export * from "./bootstrap.ts";
export * from "./brent.ts";
export * from "./chi2.ts";
export * from "./correlations.ts";
export * from "./evaporation.ts";
export * from "./msd_fit.ts";
export * from "./seed.ts";
export * from "./synthetic.ts";
export * from "./vinen.ts";
export { chiSquareCdf, chiSquareQuantile, normalCdf, normalQuantile, studentTQuantile } from "./_jstat.ts";
