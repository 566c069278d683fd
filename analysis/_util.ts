/** Small helpers shared across analysis/: JSON-safe numbers, error text, record checks. */
export function finiteOrNull(v: number): number | null {
  return Number.isFinite(v) ? v : null;
}

export function errorText(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}

export function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}
