/**
 * Applies an engine's refinement table (`Engine.refinement`, contract `RefinementTable`) to one parameter
 * point: each rule multiplies a parameter (dotted path inside `parameters`) or a run control (`run.<name>`) by
 * its factor, bringing a value above the rule's default down to the default first. The result is plain data
 * that the caller validates again with the engine's `paramsSchema` (a refinement may leave the allowed range,
 * e.g. a grid beyond 1024 points: the audit then says so for that variant).
 *
 * @example
 * ```ts
 * const v = applyRefinement(params, controls, { id: "numerics", pass: "numerics", rules: [
 *   { path: "run.tolerance", factor: 0.1 },
 *   { path: "integrator.stepCapFactor", factor: 0.1, default: 0.2 },
 * ] });
 * if ("changes" in v) console.log(v.changes); // ["run.tolerance 1e-9 → 1e-10 (×0.1)", …]
 * ```
 */
import type { RefinementVariant, RunControls } from "./contract.ts";

/** A variant applied to a point: the new parameters and controls and what changed, in words. */
export interface RefinedPoint {
  readonly params: unknown;
  readonly controls: RunControls;
  readonly changes: readonly string[];
}

/** A variant that does not apply to a point, with the reason. */
export interface SkippedVariant {
  readonly notApplicable: string;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

/** Deep copy of JSON-like data. */
function copy<T>(v: T): T {
  return JSON.parse(JSON.stringify(v)) as T;
}

/** Shortest readable form of a number (6 significant digits; exponent form below 10⁻³). */
function num(x: number): string {
  const r = Number(x.toPrecision(6));
  return r !== 0 && Math.abs(r) < 1e-3 ? r.toExponential() : String(r);
}

/** Applies `variant` to (params, controls); see the module comment. */
export function applyRefinement(
  params: unknown,
  controls: RunControls,
  variant: RefinementVariant,
): RefinedPoint | SkippedVariant {
  const p = copy(params) as Record<string, unknown>;
  const c: Record<string, number> = { ...controls };
  const changes: string[] = [];
  for (const rule of variant.rules) {
    const inRun = rule.path.startsWith("run.");
    const keys = (inRun ? rule.path.slice(4) : rule.path).split(".");
    let holder: Record<string, unknown> = inRun ? c : p;
    for (const k of keys.slice(0, -1)) {
      const next = holder[k];
      if (!isRecord(next)) return { notApplicable: `${rule.path} is not set at this point` };
      holder = next;
    }
    const last = keys[keys.length - 1];
    const before = holder[last];
    if (typeof before !== "number" || !Number.isFinite(before)) {
      return { notApplicable: `${rule.path} is not a number at this point` };
    }
    if (before === 0 && rule.zeroMeans !== undefined) return { notApplicable: rule.zeroMeans };
    let after: number;
    let how: string;
    if (rule.default !== undefined && before > rule.default) {
      after = rule.default;
      how = "its default";
    } else {
      // 12 significant digits: 1e-9 × 0.1 is 1e-10, not 1.0000000000000001e-10.
      after = Number((before * rule.factor).toPrecision(12));
      how = rule.factor < 1 ? `÷${num(1 / rule.factor)}` : `×${num(rule.factor)}`;
    }
    if (Number.isInteger(before) && Number.isInteger(rule.factor)) after = Math.round(after);
    holder[last] = after;
    changes.push(`${rule.path} ${num(before)} → ${num(after)} (${how})`);
  }
  return { params: p, controls: c as unknown as RunControls, changes };
}
