/**
 * The Gross–Pitaevskii engine's pre-flight hint: vortices per frame (imprinted count; sound can create pairs, so
 * allow some growth) and the grid's memory.
 *
 * Memory model: about 200 bytes per grid point for ψ, the split-step operators, the FFT work arrays, the
 * relaxation buffers and the cached ground state (measured 13 MiB at 256² and 50 MiB at 512², see DEVELOPERS.md).
 */
import type { SizeHint } from "../contract.ts";
import type { GpParams } from "./params.ts";

/** Bytes of engine state per grid point (measured; see the module comment). */
const BYTES_PER_GRID_POINT = 200;

export function gpSizeHint(params: GpParams): SizeHint {
  const n = params.initial.kind === "random-cloud" ? params.initial.count : params.initial.vortices.length;
  const points = params.grid.points ** 2;
  return { objects: n, maxObjects: 2 * n + 16, stateBytes: BYTES_PER_GRID_POINT * points };
}
