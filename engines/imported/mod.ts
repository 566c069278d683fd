/**
 * Public door of the imported-data engines (`imported-tracks-2d`, `imported-filaments-3d`) and of the export
 * format they read back exactly (`spindrift export` writes it with {@link writeFramesCsv}).
 *
 * @example
 * ```ts
 * import { IMPORTED_ENGINES, writeFramesCsv } from "./mod.ts";
 * IMPORTED_ENGINES.map((e) => e.id); // ["imported-tracks-2d", "imported-filaments-3d"]
 * ```
 */
import type { Engine } from "../contract.ts";
import { importedFilaments3dEngine, importedTracks2dEngine } from "./engine.ts";

export { IMPORTED_ENGINE_VERSION, importedFilaments3dEngine, importedTracks2dEngine } from "./engine.ts";
export {
  type Filaments3dParams,
  filaments3dParamsSchema,
  type Tracks2dParams,
  tracks2dParamsSchema,
} from "./params.ts";
export {
  EXPORT_COLUMNS_2D,
  EXPORT_COLUMNS_3D,
  type ExportFrame,
  type ExportOptions,
  formatExportNumber,
  writeFramesCsv,
} from "./export_format.ts";
export { lengthInStudyUnits, studyUnitLabels } from "./units.ts";

/** Both imported-data engines, for the registry. */
// deno-lint-ignore no-explicit-any
export const IMPORTED_ENGINES: readonly Engine<any>[] = [importedTracks2dEngine, importedFilaments3dEngine];
