/**
 * The imported-data engines: realisations read from files that spindrift did not compute (Gross–Pitaevskii
 * vortex detections, another group's filament runs, experiments), so the same classification, MSD, diffusion
 * fit, database and report apply to them.
 *
 * Why two engines: an engine's capabilities are static (observables are chosen before a realisation runs), but
 * 2D tracks and 3D filament snapshots carry different fields. So one shared implementation is registered as
 * two engines, each with honest capabilities:
 * - `imported-tracks-2d`: 2D point vortices, fields ["circulation"], objects "vortex";
 * - `imported-filaments-3d`: 3D filament points, fields ["loop", "marker"], objects "filament-point".
 *
 * Formats: CSV/TSV, JSON lines, HDF5 (see the readers). Events: "track-end" when a tracked id (2D: a vortex,
 * 3D: a marker) disappears. Scalars: `import.rows` (rows of this realisation read), `import.record_times`
 * (distinct record times read). A file that cannot be read fails only its own realisation, with a message that
 * names the file, the row (or dataset and index), the column, the bad value and what was expected.
 *
 * @example
 * ```ts
 * import { importedTracks2dEngine } from "./engine.ts";
 * const params = importedTracks2dEngine.paramsSchema.parse({ source: { files: "runs/r{index}.csv" } });
 * await importedTracks2dEngine.run({ params, controls, rng, realisationIndex: 0 }, sink);
 * ```
 */
import type { Engine, EngineCapabilities, EngineRunInput, EngineRunSummary, FrameSink } from "../contract.ts";
import { FrameAssembler } from "./assemble.ts";
import {
  type Filaments3dParams,
  filaments3dParamsSchema,
  type Tracks2dParams,
  tracks2dParamsSchema,
} from "./params.ts";
import { assemblerSettings, planRead, selectionText, sourceFilePaths } from "./plan.ts";
import { readDelimited } from "./read_delimited.ts";
import { readHdf5 } from "./read_hdf5.ts";
import { readJsonLines } from "./read_jsonl.ts";
import { lengthInStudyUnits, studyUnitLabels } from "./units.ts";
import { FILAMENTS_3D_STARTER, TRACKS_2D_STARTER } from "./starter.ts";

/** Version of both imported-data engines (bumped when the same files could give different frames). */
export const IMPORTED_ENGINE_VERSION = "1.0.0";

const UNITS = {
  length: "study length unit (parameters.units.length; as in the files when no units are given)",
  time: "study time unit (parameters.units.time, or ℓ²/κ with parameters.units.kappa)",
  circulation: "κ",
} as const;

const TRACK_END_2D =
  "a vortex present in the previous frame is absent from this one (ids: the vortex; data: x, y " +
  "at the previous frame, whose time the event carries)";
const TRACK_END_3D =
  "a marker present in the previous frame is absent from this one (ids: the marker; data: x, y, " +
  "z at the previous frame, whose time the event carries)";

async function runImport(
  dimension: 2 | 3,
  input: EngineRunInput<Tracks2dParams | Filaments3dParams>,
  sink: FrameSink,
): Promise<EngineRunSummary> {
  const params = input.params;
  const plan = planRead(params, dimension, input.realisationIndex, input.baseDirectory);
  const asm = new FrameAssembler({
    ...assemblerSettings(params, dimension),
    controls: input.controls,
    source: plan.display,
    selection: selectionText(plan),
  }, sink);
  switch (plan.format) {
    case "csv":
    case "tsv":
      await readDelimited(plan, asm);
      break;
    case "jsonl":
      await readJsonLines(plan, asm);
      break;
    case "hdf5":
      await readHdf5(plan, asm);
      break;
  }
  return asm.finish();
}

const capabilities2d: EngineCapabilities = {
  dimension: 2,
  fields: ["circulation"],
  objects: "vortex",
  events: { "track-end": TRACK_END_2D },
  diagnostics: {},
  units: UNITS,
};

const capabilities3d: EngineCapabilities = {
  dimension: 3,
  fields: ["loop", "marker"],
  objects: "filament-point",
  events: { "track-end": TRACK_END_3D },
  diagnostics: {},
  units: UNITS,
};

/** 2D point-vortex tracks read from CSV/TSV, JSON lines or HDF5 files. */
export const importedTracks2dEngine: Engine<Tracks2dParams> = {
  id: "imported-tracks-2d",
  version: IMPORTED_ENGINE_VERSION,
  title: "Imported 2D vortex tracks (CSV, TSV, JSON lines, HDF5)",
  capabilities: capabilities2d,
  usesSeed: false,
  paramsSchema: tracks2dParamsSchema,
  starter: TRACKS_2D_STARTER,
  scales: (params) => ({ units: studyUnitLabels(params.units) }),
  run: (input, sink) => runImport(2, input, sink),
  inputFiles: (params, realisations) => sourceFilePaths(params.source, realisations),
};

/** 3D vortex-filament snapshots read from CSV/TSV, JSON lines or HDF5 files. */
export const importedFilaments3dEngine: Engine<Filaments3dParams> = {
  id: "imported-filaments-3d",
  version: IMPORTED_ENGINE_VERSION,
  title: "Imported 3D vortex-filament snapshots (CSV, TSV, JSON lines, HDF5)",
  capabilities: capabilities3d,
  usesSeed: false,
  paramsSchema: filaments3dParamsSchema,
  starter: FILAMENTS_3D_STARTER,
  scales: (params) => ({
    coreRadius: lengthInStudyUnits(params.coreRadius, params.units, "coreRadius"),
    units: studyUnitLabels(params.units),
  }),
  run: (input, sink) => runImport(3, input, sink),
  inputFiles: (params, realisations) => sourceFilePaths(params.source, realisations),
};
