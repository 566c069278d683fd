/**
 * Public door of the 3D vortex-filament engine (`vortex-filament-3d`).
 *
 * @example
 * ```ts
 * import { filamentEngine } from "./mod.ts";
 * filamentEngine.capabilities.dimension; // 3
 * ```
 */
export { filamentEngine, resolveSettings } from "./engine.ts";
export { ringConstant } from "./biot_savart.ts";
export { type FilamentParams, type FilamentParamsInput, filamentParamsSchema, KAPPA_HE4 } from "./params.ts";
export { HELIUM_TABLE, heliumAt, HeliumRangeError } from "./helium.ts";
