/**
 * Ensemble analysis numerics: pure functions from per-realisation series to answers with intervals.
 *
 * - `prepareTracks`, `diffusionEvidence` — loss-aware D (survivor average, fixed cohort, lag increments) and
 *   the rule that declares a diffusive regime only when all three agree.
 * - `fitDiffusion`, `thresholdSensitivity` — D from a survivor-average MSD series alone (kept for series input).
 * - `pointDifference`, `trendFit` — the study's question: differences and trends of D between points.
 * - `bootstrap`, `percentileInterval`, `bcaInterval`, `jackknife` — generic bootstrap over realisations.
 * - `chiSquareDiffusionInterval` — exact χ² interval for D from independent Brownian increments.
 * - `VinenSolver`, `fitVinen`, `fitVinenDecay` — radial Vinen-type equation: solver, fit of D with the loss
 *   term (goodness of fit, loss check), χ₂ from a homogeneous decay.
 * - `velocityCorrelations`, `VelocityCorrelationAccumulator` — f(r), g(r) from probe velocities.
 * - `walkerEnsemble` and the track generators — synthetic data with known D.
 * - `streamFromSeed` — reproducible streams from recorded seed strings.
 * - `steinSampleSize`, `steinInterval`, `projectedHalfWidth` — realisations needed for a target precision
 *   (Stein's two-stage procedure) and the half-width a pilot's spread projects.
 * - `pairedDifference`, `pairedBootstrapDifference` — paired comparisons of reruns with the same seeds.
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
export * from "./compare_points.ts";
export * from "./correlations.ts";
export * from "./diffusion.ts";
export * from "./evaporation.ts";
export * from "./msd_fit.ts";
export * from "./paired.ts";
export * from "./seed.ts";
export * from "./stein.ts";
export * from "./synthetic.ts";
export * from "./tracks.ts";
export * from "./vinen.ts";
export * from "./vinen_fit.ts";
export * from "./window.ts";
export { chiSquareCdf, chiSquareQuantile, normalCdf, normalQuantile, studentTQuantile } from "./_jstat.ts";
