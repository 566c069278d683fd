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
import { isRecord } from "../_util.ts";
import { domainOf } from "./engines.ts";

/** The latest allowed window end and the rule that set it. */
export interface DomainCut {
  /** Lag since the first frame at which the cluster reaches a quarter of the domain (null: no cut). */
  readonly tCut: number | null;
  readonly rule: string;
}

/**
 * Quarter-domain cut of the fitting window (docs/methods.md §5.1): the first lag at which the cluster's diameter
 * 2⟨R_rms⟩ (stored series `cluster_rms_radius`, mean over realisations) reaches a quarter of the domain's
 * linear size (disk diameter, box side); unbounded and unknown domains have no cut.
 */
export function domainCut(
  db: DatabaseSync,
  ids: readonly number[],
  where: { readonly engineId: string; readonly params: unknown },
): DomainCut {
  const domain = domainOf(where.engineId, where.params);
  if (domain.kind === "unknown") {
    return { tCut: null, rule: "domain size unknown for this engine: no quarter-domain cut" };
  }
  if (domain.size === null) return { tCut: null, rule: "unbounded domain: no quarter-domain cut" };
  let rule = `t₂ ≤ first t with 2·⟨R_rms⟩ ≥ (domain size ${domain.size})/4`;
  const rms = readAlignedSeries(db, ids, "cluster_rms_radius");
  const limit = domain.size / 8;
  for (let k = 0; k < rms.k.length; k++) {
    let s = 0, n = 0;
    for (const row of rms.values) {
      if (Number.isFinite(row[k])) {
        s += row[k];
        n++;
      }
    }
    if (n > 0 && s / n >= limit) {
      const t = rms.t[k] - rms.t[0];
      if (t > 0) return { tCut: t, rule };
      rule += " (reached at t = 0: ignored)";
      break;
    }
  }
  return { tCut: null, rule };
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
