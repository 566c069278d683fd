/**
 * Validation of the run controls every compute engine receives (private): a clear `invalid-state` failure that
 * lists every bad control, instead of a run that never ends or divides by zero.
 */
import { EngineFailure, type RunControls } from "./contract.ts";

/** Throws EngineFailure("invalid-state") naming every bad control; `tolerance` is checked only when the engine uses it. */
export function checkRunControls(c: RunControls, opts: { readonly usesTolerance: boolean }): void {
  const bad: string[] = [];
  if (!(c.duration > 0 && Number.isFinite(c.duration))) bad.push(`duration ${c.duration} must be > 0`);
  if (!(c.sampleInterval > 0 && c.sampleInterval <= c.duration * (1 + 1e-12))) {
    bad.push(`sampleInterval ${c.sampleInterval} must be > 0 and ≤ duration`);
  }
  if (opts.usesTolerance && !(c.tolerance > 0 && c.tolerance < 1)) {
    bad.push(`tolerance ${c.tolerance} must be in (0, 1)`);
  }
  if (!(c.maxDistance > 0)) bad.push(`maxDistance ${c.maxDistance} must be > 0`);
  if (bad.length > 0) throw new EngineFailure("invalid-state", `invalid run controls: ${bad.join("; ")}`, 0);
}
