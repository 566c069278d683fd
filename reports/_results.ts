/** Stored ensemble results grouped per parameter point, and the small readers and cells the pages share. */
import type { EnsembleResult } from "../store/ensemble.ts";
import type { StudyAggregate } from "./aggregate.ts";
import { escapeHtml, formatNumber } from "./format.ts";
import type { PointView } from "./specs.ts";

export type Detail = Readonly<Record<string, unknown>>;

/** One parameter point with its stored rows (`"<analysis>/<name>"` → row). */
export interface PointRows {
  /** The stored label (`initial.count=140`). */
  readonly label: string;
  /** Readable name (`initial count = 140`): legend entries, table rows and colour keys. */
  readonly name: string;
  readonly colour: string;
  readonly index: number;
  readonly varied: Readonly<Record<string, unknown>>;
  readonly done: number;
  readonly planned: number | null;
  readonly rows: ReadonlyMap<string, EnsembleResult>;
}

/** The results of each point of the aggregate, in point order. */
export function groupResults(
  agg: StudyAggregate,
  results: readonly EnsembleResult[],
  view: PointView,
): PointRows[] {
  return agg.points.map((p, i) => {
    const rows = new Map<string, EnsembleResult>();
    for (const r of results) if (r.pointHash === p.point.pointHash) rows.set(`${r.analysis}/${r.name}`, r);
    return {
      label: p.point.label,
      name: view.names[i],
      colour: view.colours[i],
      index: p.point.index,
      varied: p.point.varied,
      done: p.counts.done,
      planned: p.counts.planned,
      rows,
    };
  });
}

/** The interval level stored with the answers (default 0.95). */
export function levelOf(points: readonly PointRows[]): number {
  for (const p of points) {
    const l = p.rows.get("diffusion/D")?.detail.level;
    if (typeof l === "number") return l;
  }
  return 0.95;
}

export function pct(level: number): string {
  return `${Math.round(level * 1000) / 10} %`;
}

export function str(v: unknown): string | null {
  return typeof v === "string" ? v : null;
}

export function num(v: unknown): number | null {
  return typeof v === "number" && Number.isFinite(v) ? v : null;
}

export function rec(v: unknown): Detail | null {
  return typeof v === "object" && v !== null && !Array.isArray(v) ? v as Detail : null;
}

export function arr(v: unknown): unknown[] {
  return Array.isArray(v) ? v : [];
}

export function strings(v: unknown): string[] {
  return arr(v).filter((x): x is string => typeof x === "string");
}

/** " [lower, upper]" with four significant digits, or "". */
export function ciText(lower: number | null, upper: number | null, scale = 1): string {
  return lower !== null && upper !== null
    ? ` [${formatNumber(lower * scale)}, ${formatNumber(upper * scale)}]`
    : "";
}

/** A number in a span carrying its stored value at full precision. */
export function valueSpan(role: string, v: number, scale = 1): string {
  return `<span data-role="${role}" data-value="${String(v)}">${escapeHtml(formatNumber(v * scale))}</span>`;
}

/** A table cell showing a stored number; `data-value` holds it at full precision. */
export function numCell(v: number | null, cls = "num"): string {
  if (v === null) return `<td class="${cls}">—</td>`;
  return `<td class="${cls}" data-value="${String(v)}">${escapeHtml(formatNumber(v))}</td>`;
}

/** A table cell showing a stored fraction as a percentage (`data-value` holds the fraction). */
export function percentCell(v: number | null): string {
  if (v === null) return `<td class="num">—</td>`;
  return `<td class="num" data-value="${String(v)}">${escapeHtml(formatNumber(100 * v))} %</td>`;
}

/** Status words of a row without a value. */
export function statusWords(status: string): string {
  return status === "no-diffusive-regime"
    ? "no diffusive regime"
    : status === "rejected"
    ? "rejected: no D"
    : status === "not-available"
    ? "not available"
    : status;
}

/**
 * "0.2229 [0.1941, 0.2694]" with each number in its own data-bearing span, or the status with its reason.
 * `scale` multiplies the shown numbers (not the stored `data-value`s); `unit` follows them (" %").
 */
export function estimateCell(r: EnsembleResult | undefined, field: string, scale = 1, unit = ""): string {
  if (r === undefined) return `<td>—</td>`;
  if (r.value === null) {
    const status = str(r.detail.status) ?? "not available";
    const reason = str(r.detail.reason);
    return `<td class="status" data-field="${field}" data-status="${escapeHtml(status)}"><span class="warn">${
      escapeHtml(statusWords(status))
    }</span>${reason ? `<br><span class="note">${escapeHtml(reason)}</span>` : ""}</td>`;
  }
  const ci = r.lower !== null && r.upper !== null
    ? ` [${valueSpan("lower", r.lower, scale)}, ${valueSpan("upper", r.upper, scale)}]`
    : ` <span class="note">(no interval)</span>`;
  return `<td data-field="${field}">${valueSpan("value", r.value, scale)}${ci}${escapeHtml(unit)}</td>`;
}

/** Replaces the stored point labels in a sentence of the analysis by the points' readable names. */
export function withNames(text: string, points: readonly PointRows[]): string {
  let out = text;
  for (const p of [...points].sort((a, b) => b.label.length - a.label.length)) {
    if (p.label !== "" && p.label !== p.name) out = out.split(p.label).join(p.name);
  }
  return out;
}
