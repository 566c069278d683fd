/**
 * Public door of the 2D point-vortex engine (`point-vortex-2d`).
 *
 * @example
 * ```ts
 * import { pointVortexEngine } from "./mod.ts";
 * pointVortexEngine.capabilities.dimension; // 2
 * ```
 */
export { pointVortexEngine } from "./engine.ts";
export { type PointVortexParams, pointVortexParamsSchema } from "./params.ts";
