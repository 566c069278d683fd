/**
 * Text formatting shared by the report pages: HTML escaping and numbers with four significant digits.
 *
 * @example
 * ```ts
 * escapeHtml("<b>"); // "&lt;b&gt;"
 * formatNumber(3.14159265); // "3.142"
 * ```
 */
import type { MeanInterval } from "./intervals.ts";

/** Escapes text for HTML element content and quoted attribute values. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ESCAPES[c]);
}

const ESCAPES: Record<string, string> = {
  "&": "&amp;",
  "<": "&lt;",
  ">": "&gt;",
  '"': "&quot;",
  "'": "&#39;",
};

/** "5.00 [3.21, 6.79] (n = 8)", or "7 (n = 1, no interval)". */
export function formatInterval(ci: MeanInterval): string {
  if (ci.n === 0) return "— (n = 0)";
  if (ci.lower === null || ci.upper === null) return `${formatNumber(ci.mean)} (n = ${ci.n}, no interval)`;
  return `${formatNumber(ci.mean)} [${formatNumber(ci.lower)}, ${formatNumber(ci.upper)}] (n = ${ci.n})`;
}

/** Four significant digits; exponent form outside [1e-3, 1e5). */
export function formatNumber(x: number): string {
  if (Number.isNaN(x)) return "NaN";
  if (!Number.isFinite(x)) return x > 0 ? "∞" : "−∞";
  if (x === 0) return "0";
  const a = Math.abs(x);
  if (a >= 1e-3 && a < 1e5) return String(Number(x.toPrecision(4)));
  return x.toExponential(3).replace(/\.?0+e/, "e");
}
