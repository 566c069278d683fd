/**
 * Public door of the external-program engines (`external-program-2d`, `external-program-3d`): run a group's own
 * simulation program per realisation and import its output, plus the launcher's permission step.
 *
 * @example
 * ```ts
 * import { EXTERNAL_ENGINES } from "./mod.ts";
 * EXTERNAL_ENGINES.map((e) => e.id); // ["external-program-2d", "external-program-3d"]
 * ```
 */
import type { Engine } from "../contract.ts";
import { externalProgram2dEngine, externalProgram3dEngine } from "./engine.ts";

export { EXTERNAL_ENGINE_VERSION, externalProgram2dEngine, externalProgram3dEngine } from "./engine.ts";
export { EXTERNAL_2D_ID, EXTERNAL_3D_ID, EXTERNAL_ENGINE_IDS } from "./ids.ts";
export {
  type External2dParams,
  external2dParamsSchema,
  type External3dParams,
  external3dParamsSchema,
  type ExternalParams,
  SPINDRIFT_ENVIRONMENT,
  STDERR_LOG,
  STDOUT_LOG,
} from "./params.ts";
export { type Invocation, prepareInvocation } from "./invocation.ts";
export { commandLine, resolveProgram, SHELL, shellQuote } from "./program_path.ts";
export { type ProgramSeed, programSeed } from "./program_seed.ts";
export { allowRunFlag, type StudyPrograms, studyPrograms } from "./allow_run.ts";

/** Both external-program engines, for the registry. */
// deno-lint-ignore no-explicit-any
export const EXTERNAL_ENGINES: readonly Engine<any>[] = [externalProgram2dEngine, externalProgram3dEngine];
