/**
 * `spindrift analyse --json`: the analysis summary as one JSON object (the shape is documented in README.md,
 * "Machine-readable output", and pinned by `analyse_json_test.ts`). Numbers are in the study's units; D of a
 * physical-unit study also as D/κ with the κ recorded with the study. Non-finite numbers are null.
 *
 * @example
 * ```ts
 * const obj = analysisJson(summary, { database: "film.sqlite", units, errors: [] });
 * console.log(JSON.stringify(obj, null, 2));
 * ```
 */
import type { AnalysisSummary } from "../analysis/mod.ts";
import type { EvaporationEstimate } from "../analysis/estimators/evaporation.ts";
import type { EstimatorSummary } from "../analysis/to_store/diffusion.ts";
import { diffusionUnit, recordedKappa, timeInKappaUnits } from "../engines/units.ts";

/** An estimate with its interval (null when absent). */
export interface JsonEstimate {
  readonly value: number | null;
  readonly lower: number | null;
  readonly upper: number | null;
}

function fin(x: number | null | undefined): number | null {
  return typeof x === "number" && Number.isFinite(x) ? x : null;
}

function est(value: number | null | undefined, lower?: number | null, upper?: number | null): JsonEstimate {
  return { value: fin(value), lower: fin(lower), upper: fin(upper) };
}

function evap(e: EvaporationEstimate | null): JsonEstimate | null {
  return e === null ? null : est(e.value, e.interval?.lower, e.interval?.upper);
}

function estimator(e: EstimatorSummary) {
  return {
    name: e.name,
    D: fin(e.D),
    lower: fin(e.lower),
    upper: fin(e.upper),
    exponent: e.exponent === null ? null : est(e.exponent.value, e.exponent.lower, e.exponent.upper),
    range: e.range,
    pass: e.pass,
  };
}

/** The JSON object of `analyse --json`. */
export function analysisJson(
  s: AnalysisSummary,
  o: {
    readonly database: string;
    readonly units: Readonly<Record<string, string>>;
    readonly errors: readonly string[];
  },
) {
  const labels = o.units.length && o.units.time ? { length: o.units.length, time: o.units.time } : undefined;
  const kappaUnits = labels === undefined || timeInKappaUnits(labels.time);
  const kappa = kappaUnits ? 1 : recordedKappa(o.units) ?? null;
  const dOverKappa = (e: JsonEstimate): JsonEstimate | null =>
    kappa === null || e.value === null ? null : est(
      e.value / kappa,
      e.lower === null ? null : e.lower / kappa,
      e.upper === null ? null : e.upper / kappa,
    );
  return {
    database: o.database,
    study: { id: s.studyId, name: s.studyName },
    dimension: s.dimension,
    units: {
      length: labels?.length ?? null,
      time: labels?.time ?? null,
      kappa,
      diffusion: diffusionUnit(labels).header,
    },
    bootstrap: { replicates: s.replicates, seedBase: s.seedBase },
    question: s.question.map((l) => l.replace(/^The question: /, "")),
    chi2Source: s.chi2Source,
    points: s.points.map((p) => {
      const d = p.diffusion;
      const answer = est(d.value, d.lower, d.upper);
      return {
        index: p.index,
        label: p.label,
        pointHash: p.pointHash,
        realisations: p.realisations,
        diffusion: {
          status: d.status,
          ...answer,
          dOverKappa: dOverKappa(answer),
          reason: d.reason,
          reasons: [...d.reasons],
          window: d.window,
          tauC: fin(d.tauC),
          support: fin(d.support),
          estimators: d.estimators.map(estimator),
          lossLimited: d.lossLimited === null ? null : {
            t1: d.lossLimited.t1,
            tEnd: d.lossLimited.tEnd,
            lossAt: d.lossLimited.lossAt,
            estimator: estimator(d.lossLimited.estimator),
          },
          warnings: [...d.warnings],
        },
        vinen: {
          status: p.vinen.status,
          ...est(p.vinen.value, p.vinen.lower, p.vinen.upper),
          dOverKappa: dOverKappa(est(p.vinen.value, p.vinen.lower, p.vinen.upper)),
          reason: p.vinen.reason,
          mode: p.vinen.mode,
          chi2: est(p.vinen.chi2, p.vinen.chi2Lower, p.vinen.chi2Upper),
          reducedChi2: fin(p.vinen.reducedChi2),
          notes: [...p.vinen.notes],
        },
        evaporation: {
          status: p.evaporation.status,
          reason: p.evaporation.reason,
          objects: p.evaporation.objects,
          tEnd: fin(p.evaporation.tEnd),
          evaporated: evap(p.evaporation.evaporated),
          tHalf: evap(p.evaporation.tHalf),
          rate: evap(p.evaporation.rate),
          lostFraction: evap(p.evaporation.lostFraction),
        },
        sensitivity: { status: p.sensitivity.status, reason: p.sensitivity.reason },
        correlations: { status: p.correlations.status, reason: p.correlations.reason },
      };
    }),
    rowsWritten: s.rowsWritten,
    errors: [...o.errors],
  };
}
