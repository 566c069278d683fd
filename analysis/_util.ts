/** Small helpers shared across analysis/: JSON-safe numbers, error text, record checks. */
import { isDatabaseError } from "../store/reads.ts";

export function finiteOrNull(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

/** The message of an analysis failure; database errors are not per-point results: they end the analysis. */
export function errorText(e: unknown): string {
  if (isDatabaseError(e)) throw e;
  return e instanceof Error ? e.message : String(e);
}

export function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}
