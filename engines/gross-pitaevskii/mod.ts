/**
 * Public door of the 2D Gross–Pitaevskii engine (`gross-pitaevskii-2d`).
 *
 * @example
 * ```ts
 * import { gpEngine } from "./mod.ts";
 * gpEngine.capabilities.units.time; // "ξ²/κ"
 * ```
 */
export { gpEngine } from "./engine.ts";
export { type GpParams, gpParamsSchema } from "./params.ts";
