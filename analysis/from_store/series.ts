/**
 * Stored series of a parameter point as estimator inputs: the MSD ensemble with counts, R_rms and N_main on
 * common frame indices, the quarter-domain cut of the fitting window, and the run controls, classification
 * thresholds and dimension recorded with the study.
 */
import type { DatabaseSync } from "node:sqlite";
import type { Dimension, RunControls } from "../../engines/contract.ts";
import type { ClassificationConfig } from "../../engines/observables/contract.ts";
import { iterateFrames } from "../../store/frames.ts";
import { type AlignedSeries, readAlignedSeries } from "../../store/reads.ts";
import type { MsdEnsembleInput } from "../estimators/msd_fit.ts";
import { isRecord } from "../_util.ts";
import { domainOf } from "./engines.ts";

/** The MSD ensemble read from the stored series, and what the fit needs besides. */
export interface StoredEnsemble {
  readonly input: MsdEnsembleInput;
  readonly timeOrigin: number;
  readonly tCut: number | null;
  readonly tCutRule: string;
}

/** The MSD ensemble of the stored series of `ids` (null when none recorded `msd`). */
export function storedEnsemble(
  db: DatabaseSync,
  ids: readonly number[],
  where: { readonly engineId: string; readonly params: unknown },
): StoredEnsemble | null {
  if (ids.length === 0) return null;
  const msd = readAlignedSeries(db, ids, "msd");
  if (msd.k.length === 0) return null;
  const timeOrigin = msd.t[0];
  const t = Float64Array.from(msd.t, (x) => x - timeOrigin);
  const counts = alignTo(readAlignedSeries(db, ids, "msd_count"), msd.k, 0);
  const rms = alignTo(readAlignedSeries(db, ids, "cluster_rms_radius"), msd.k, Number.NaN);
  const main = alignTo(readAlignedSeries(db, ids, "main_count"), msd.k, 0);
  const input: MsdEnsembleInput = {
    t,
    msd: msd.values,
    ...(counts ? { counts } : {}),
    ...(rms ? { rmsRadius: rms } : {}),
    ...(main ? { mainCount: main } : {}),
  };
  // Quarter-domain cut: the cluster's diameter 2R_rms reaches a quarter of the domain's linear size.
  const domain = domainOf(where.engineId, where.params);
  let tCut: number | null = null;
  let tCutRule = domain.kind === "unknown"
    ? "domain size unknown for this engine: no quarter-domain cut"
    : domain.size === null
    ? "unbounded domain: no quarter-domain cut"
    : `t₂ ≤ first t with 2·⟨R_rms⟩ ≥ (domain size ${domain.size})/4`;
  if (domain.size !== null && rms) {
    const limit = domain.size / 8;
    for (let k = 0; k < t.length; k++) {
      let s = 0, n = 0;
      for (const row of rms) {
        if (Number.isFinite(row[k])) {
          s += row[k];
          n++;
        }
      }
      if (n > 0 && s / n >= limit) {
        tCut = t[k] > 0 ? t[k] : null;
        tCutRule += tCut === null ? " (reached at t = 0: ignored)" : "";
        break;
      }
    }
  }
  return { input, timeOrigin, tCut, tCutRule };
}

/** Rows of `a` re-indexed onto frame indices `k` (absent → fill); null when `a` has no data. */
export function alignTo(a: AlignedSeries, k: Int32Array, fill: number): Float64Array[] | null {
  if (a.k.length === 0) return null;
  const col = new Map<number, number>();
  a.k.forEach((kk, j) => col.set(kk, j));
  return a.values.map((row) => {
    const out = new Float64Array(k.length).fill(fill);
    k.forEach((kk, j) => {
      const c = col.get(kk);
      if (c !== undefined && Number.isFinite(row[c])) out[j] = row[c];
    });
    return out;
  });
}

export function readControls(v: unknown): RunControls {
  const c = isRecord(v) ? v : {};
  const num = (x: unknown, d: number) => (typeof x === "number" && Number.isFinite(x) ? x : d);
  return {
    duration: num(c.duration, 1),
    sampleInterval: num(c.sampleInterval, 1),
    tolerance: num(c.tolerance, 1e-8),
    maxDistance: num(c.maxDistance, Number.POSITIVE_INFINITY),
  };
}

export function readClassification(normalized: Record<string, unknown>): ClassificationConfig | null {
  const obs = normalized.observables;
  if (!isRecord(obs) || !isRecord(obs.classification)) return null;
  const c = obs.classification;
  const keys = ["separationFactor", "radiusFactor", "stickyFrames", "outwardCosine", "speedTolerance"];
  if (!keys.every((k) => typeof c[k] === "number")) return null;
  return c as unknown as ClassificationConfig;
}

/** Dimension from the first stored frame's layout (a z column means 3D); 2 when no frame is stored. */
export function layoutDimension(db: DatabaseSync, ids: readonly number[]): Dimension {
  for (const id of ids) {
    for (const f of iterateFrames(db, id)) return "z" in f.columns ? 3 : 2;
  }
  return 2;
}
