/**
 * The `question` rows: the study's sweep answered with numbers (`estimators/compare_points.ts`). For every
 * point after the first that has an answer, D − D(base) and D/D(base) with bootstrap intervals, base = the
 * first point of the sweep with an answer; when exactly one swept parameter is numeric and every other swept
 * value is shared, the trend dD/dx with its interval (stored on the base point). The `verdict` row (base
 * point) holds the plain-words sentences that `analyse` prints first and the report shows at the top.
 */
import type { PointRecord } from "../../store/reads.ts";
import type { EnsembleResultInput } from "../../store/ensemble.ts";
import {
  type Comparison,
  type PointAnswer,
  pointDifference,
  trendFit,
} from "../estimators/compare_points.ts";
import { fmt } from "../estimators/window.ts";
import type { DiffusionAnalysis } from "./diffusion.ts";

export interface QuestionPoint {
  readonly point: PointRecord;
  readonly diffusion: DiffusionAnalysis;
}

function ci(c: Comparison): string {
  return c.interval ? ` [${fmt(c.interval.lower)}, ${fmt(c.interval.upper)}]` : " (no interval)";
}

/** The single numeric swept parameter whose value alone tells the points apart, or null. */
function numericAxis(points: readonly PointRecord[]): string | null {
  const paths = [...new Set(points.flatMap((p) => Object.keys(p.varied)))];
  const numeric = paths.filter((k) => points.every((p) => typeof p.varied[k] === "number"));
  if (numeric.length !== 1 || paths.length !== 1) return null;
  return new Set(points.map((p) => p.varied[numeric[0]])).size >= 2 ? numeric[0] : null;
}

/**
 * Builds the `question` rows and the verdict lines. `level` is the interval level; rows go to `out`.
 */
export function questionRows(
  points: readonly QuestionPoint[],
  opts: { readonly level: number; readonly estimator: string },
  out: EnsembleResultInput[],
): string[] {
  if (points.length < 2) return [];
  const answered = points.filter((p) => p.diffusion.value !== null && p.diffusion.replicates !== null);
  const missing = points.filter((p) => !answered.includes(p));
  const lines: string[] = [];
  const detailBase = { level: opts.level, estimator: opts.estimator };
  if (missing.length > 0) {
    const names = missing.map((p) => p.point.label).join(", ");
    lines.push(
      answered.length < 2
        ? `not answerable with D: no diffusive regime (or no interval) at ${names}; see the evidence below`
        : `no D at ${names} (no diffusive regime or no interval): left out of the comparison`,
    );
  }
  const base = answered[0];
  const baseRow = (points.find((p) => p === base) ?? points[0]).point.pointHash;
  if (answered.length >= 2) {
    const a0: PointAnswer = {
      D: base.diffusion.value!,
      replicates: base.diffusion.replicates!,
      jackknife: base.diffusion.jackknife,
    };
    for (const p of answered.slice(1)) {
      const a: PointAnswer = {
        D: p.diffusion.value!,
        replicates: p.diffusion.replicates!,
        jackknife: p.diffusion.jackknife,
      };
      const { difference, ratio } = pointDifference(a, a0, { level: opts.level });
      const name = `D(${p.point.label}) − D(${base.point.label})`;
      const verdict = difference.detectable
        ? `${name} = ${fmt(difference.value)}${ci(difference)}: D is ${
          difference.value > 0 ? "larger" : "smaller"
        } at ${p.point.label} (ratio ${fmt(ratio.value)}${ci(ratio)})`
        : `no detectable dependence: ${name} = ${fmt(difference.value)}${ci(difference)} (ratio ${
          fmt(ratio.value)
        }${ci(ratio)})`;
      lines.push(verdict);
      const detail = {
        ...detailBase,
        base: { pointHash: base.point.pointHash, label: base.point.label, D: base.diffusion.value },
        point: { label: p.point.label, D: p.diffusion.value },
        interval: difference.method,
        detectable: difference.detectable,
        verdict,
      };
      const row = (name: string, c: Comparison, extra: Record<string, unknown>) =>
        out.push({
          pointHash: p.point.pointHash,
          analysis: "question",
          name,
          value: c.value,
          lower: c.interval?.lower ?? null,
          upper: c.interval?.upper ?? null,
          detail: { ...detail, ...extra },
        });
      row("difference", difference, {});
      row("ratio", ratio, { interval: ratio.method, detectable: ratio.detectable });
    }
    const axis = numericAxis(points.map((p) => p.point));
    if (axis !== null && new Set(answered.map((p) => p.point.varied[axis])).size >= 2) {
      const x = answered.map((p) => p.point.varied[axis] as number);
      const fit = trendFit(
        x,
        answered.map((p) => ({ D: p.diffusion.value!, replicates: p.diffusion.replicates! })),
        {
          level: opts.level,
        },
      );
      const s = fit.slope;
      const verdict = s.detectable
        ? `D ${s.value > 0 ? "increases" : "decreases"} with ${axis}: dD/d(${axis}) = ${fmt(s.value)}${
          ci(s)
        } per unit`
        : `no detectable trend with ${axis}: dD/d(${axis}) = ${fmt(s.value)}${ci(s)} per unit`;
      lines.push(verdict);
      out.push({
        pointHash: baseRow,
        analysis: "question",
        name: "trend_slope",
        value: s.value,
        lower: s.interval?.lower ?? null,
        upper: s.interval?.upper ?? null,
        detail: {
          ...detailBase,
          parameter: axis,
          x,
          D: answered.map((p) => p.diffusion.value),
          labels: answered.map((p) => p.point.label),
          weights: fit.weights,
          intercept: fit.intercept,
          reducedChi2: fit.reducedChi2,
          interval: s.method,
          detectable: s.detectable,
          verdict,
          method:
            "weighted least squares, weights 1/se² (bootstrap se); interval: percentile of the replicate slopes",
        },
      });
    }
  }
  out.push({
    pointHash: baseRow,
    analysis: "question",
    name: "verdict",
    value: null,
    detail: {
      ...detailBase,
      lines,
      answered: answered.map((p) => p.point.label),
      missing: missing.map((p) => p.point.label),
    },
  });
  return lines.map((l) => `The question: ${l}`);
}
