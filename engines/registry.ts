/**
 * The only file that lists engines. Add an engine here (and nowhere else) to make it available to study
 * files, the runner and the reports.
 */
import type { Engine } from "./contract.ts";
import { pointVortexEngine } from "./point-vortex/mod.ts";
import { IMPORTED_ENGINES } from "./imported/mod.ts";
import { EXTERNAL_ENGINES } from "./external/mod.ts";
import { filamentEngine } from "./filament/mod.ts";
import { gpEngine } from "./gross-pitaevskii/mod.ts";

// deno-lint-ignore no-explicit-any
export const ENGINES: readonly Engine<any>[] = [
  pointVortexEngine,
  filamentEngine,
  gpEngine,
  ...IMPORTED_ENGINES,
  ...EXTERNAL_ENGINES,
];

/** The engine with this id, or undefined. */
// deno-lint-ignore no-explicit-any
export function findEngine(id: string): Engine<any> | undefined {
  return ENGINES.find((e) => e.id === id);
}

/** Engine ids, for messages and suggestions. */
export function engineIds(): string[] {
  return ENGINES.map((e) => e.id);
}
