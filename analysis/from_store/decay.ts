/**
 * χ₂ from a homogeneous-decay study (docs/methods.md §5.2): the line density L(t) of a tangle decaying in a periodic
 * box, averaged over realisations, follows Vinen's free decay L₀/(1 + χ₂κL₀t/2π) [47], so 1/L is linear in t
 * with slope χ₂κ/2π; the late-time part is fitted (`fitVinenDecay`) with a bootstrap interval over
 * realisations. The decay study must use a periodic domain (so the density is total length / box volume, or in
 * 2D vortex count / box area), the same engine and settings as the spreading study it serves.
 *
 * References: W.F. Vinen, Proc. R. Soc. A 242, 493 (1957), doi:10.1098/rspa.1957.0191 [47].
 */
import { findEngine } from "../../engines/registry.ts";
import {
  openStoreReadOnly,
  readAlignedSeries,
  readRealisations,
  readStudy,
  readStudyPoints,
} from "../../store/reads.ts";
import { fitVinenDecay } from "../estimators/mod.ts";
import { AnalysisInputError } from "../errors.ts";
import type { Chi2Source } from "../options.ts";

export interface Chi2Estimate {
  readonly chi2: number;
  /** 95 % bootstrap interval over realisations (BCa where defined, else percentile), or null. */
  readonly interval: readonly [number, number] | null;
  readonly fromTime: number;
  readonly realisations: number;
  /** One line saying where the value comes from. */
  readonly source: string;
  /** The same as data, for the stored record (database path as given, study name and hash, series). */
  readonly provenance: Chi2Source & { readonly kind: "decay-study" };
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

/** Box volume (3D) or area (2D) of a periodic domain in the point's parameters, or null. */
function periodicMeasure(params: unknown, dimension: 2 | 3): number | null {
  if (!isRecord(params) || !isRecord(params.domain) || params.domain.kind !== "periodic") return null;
  const side = Number(params.domain.size ?? params.domain.side);
  if (!(side > 0)) return null;
  return dimension === 3 ? side ** 3 : side ** 2;
}

/** Estimates χ₂ from the first parameter point of the decay study stored in `dbPath`. */
export function chi2FromDecayStudy(
  dbPath: string,
  opts: { readonly seed?: string; readonly replicates?: number; readonly fromTime?: number } = {},
): Chi2Estimate {
  const db = openStoreReadOnly(dbPath);
  try {
    const study = readStudy(db);
    const engine = findEngine(study.engineId);
    if (!engine) throw new AnalysisInputError(`${dbPath}: engine ${study.engineId} is not in this build`);
    const dimension = engine.capabilities.dimension;
    const point = readStudyPoints(db, study.id)[0];
    const measure = periodicMeasure(point.params, dimension);
    if (measure === null) {
      throw new AnalysisInputError(
        `${dbPath}: χ₂ needs a homogeneous decay in a periodic box; study ${study.name} has no periodic domain`,
      );
    }
    const ids = readRealisations(db, point.pointHash, { seed: study.seed }).filter((r) => r.status === "done")
      .map((r) => r.id);
    if (ids.length < 2) {
      throw new AnalysisInputError(
        `${dbPath}: the decay study has ${ids.length} done realisation(s); need ≥ 2`,
      );
    }
    const seriesName = dimension === 3 ? "diag.line_length" : "object_count";
    const aligned = readAlignedSeries(db, ids, seriesName);
    if (aligned.k.length < 3) throw new AnalysisInputError(`${dbPath}: series ${seriesName} has < 3 frames`);
    const L = aligned.values.map((v) => Float64Array.from(v, (x) => x / measure));
    const kappa = engine.scales?.(point.params as never).circulation ?? 1;
    const fit = fitVinenDecay({ t: aligned.t, L }, {
      kappa,
      seed: opts.seed ?? `${study.studyHash}/decay`,
      replicates: opts.replicates ?? 2000,
      fromTime: opts.fromTime,
    });
    const ci = fit.ci?.bca ?? fit.ci?.percentile ?? null;
    const interval = ci ? [ci.lower, ci.upper] as const : null;
    return {
      provenance: {
        kind: "decay-study",
        path: dbPath,
        studyName: study.name,
        studyHash: study.studyHash,
        chi2: fit.chi2,
        interval,
        realisations: ids.length,
        fromTime: fit.window.t1,
        series: seriesName,
      },
      chi2: fit.chi2,
      interval,
      fromTime: fit.window.t1,
      realisations: ids.length,
      source:
        `χ₂ = ${fit.chi2.toPrecision(4)}${
          ci ? ` [${ci.lower.toPrecision(3)}, ${ci.upper.toPrecision(3)}]` : ""
        } ` +
        `from the decay of ${seriesName} in study ${study.name} (${ids.length} realisations, ` +
        `1/L linear for t ≥ ${fit.window.t1.toPrecision(3)})`,
    };
  } finally {
    db.close();
  }
}
