/**
 * End-of-run quantities of each realisation, read from the stored scalars and series: what a pilot projects,
 * what `run --until` makes precise and what the numerical audit compares pair by pair.
 *
 * - `evaporated`: objects labelled evaporated by the end (scalar `evaporated_final`; 2D vortices, 3D loops);
 * - `cluster_radius`: RMS radius of the main cluster at the last stored frame (`cluster_rms_radius`);
 * - `vortex_count` (2D): vortices left at the last frame (`object_count`), the 2D counterpart of line length;
 * - `line_length` (3D): total line length at the last frame (`line_length`);
 * - `centre_speed` (3D): |r_c(end) − r_c(0)| / (t_end − t₀) of the main-cluster centre (`cluster_centre_*`):
 *   the ring speed when the study is one ring;
 * - `msd_final`: mean-square displacement of the main-cluster survivors at the end (scalar `msd_final`);
 * - `scalar:<name>`: any stored scalar.
 * Values missing in a realisation (observable not recorded, empty main cluster) are NaN.
 */
import type { DatabaseSync } from "node:sqlite";
import { readAlignedSeries, readScalars } from "../../store/reads.ts";

/** A per-realisation quantity the credibility tools know by name. */
export interface QuantityInfo {
  readonly name: string;
  /** What it is, for tables. */
  readonly label: string;
  readonly dimension?: 2 | 3;
}

export const QUANTITIES: readonly QuantityInfo[] = [
  { name: "evaporated", label: "objects evaporated by the end" },
  { name: "cluster_radius", label: "main-cluster RMS radius at the end" },
  { name: "vortex_count", label: "vortices left at the end", dimension: 2 },
  { name: "line_length", label: "line length at the end", dimension: 3 },
  { name: "centre_speed", label: "speed of the cluster centre (one ring: its speed)", dimension: 3 },
  { name: "msd_final", label: "MSD of the main-cluster survivors at the end" },
];

/** The quantities that apply to a dimension (in the order of `QUANTITIES`). */
export function quantitiesFor(dimension: 2 | 3): QuantityInfo[] {
  return QUANTITIES.filter((q) => q.dimension === undefined || q.dimension === dimension);
}

/** Value at the last common frame of each realisation of an aligned series (NaN where missing). */
function lastColumn(db: DatabaseSync, ids: readonly number[], name: string): Float64Array {
  const s = readAlignedSeries(db, ids, name);
  const K = s.k.length;
  return Float64Array.from(s.values, (row) => (K > 0 ? row[K - 1] : Number.NaN));
}

/** Speed of the cluster centre from its first to its last stored frame (NaN where not recorded). */
function centreSpeed(db: DatabaseSync, ids: readonly number[]): Float64Array {
  const axes = ["x", "y", "z"].map((a) => readAlignedSeries(db, ids, `cluster_centre_${a}`));
  const K = axes[0].k.length;
  const out = new Float64Array(ids.length).fill(Number.NaN);
  if (K < 2) return out;
  const dt = axes[0].t[K - 1] - axes[0].t[0];
  for (let i = 0; i < ids.length; i++) {
    let d2 = 0;
    for (const s of axes) {
      if (s.k.length !== K) return out;
      d2 += (s.values[i][K - 1] - s.values[i][0]) ** 2;
    }
    out[i] = Math.sqrt(d2) / dt;
  }
  return out;
}

/**
 * Values of `names` (quantity names of `QUANTITIES` or `scalar:<name>`) for realisations `ids`, in their order.
 * @throws RangeError for an unknown name.
 */
export function readQuantities(
  db: DatabaseSync,
  ids: readonly number[],
  names: readonly string[],
): Record<string, Float64Array> {
  const out: Record<string, Float64Array> = {};
  let scalars: Map<number, Record<string, number>> | null = null;
  const scalar = (name: string) => {
    scalars ??= readScalars(db, ids);
    return Float64Array.from(ids, (id) => scalars!.get(id)?.[name] ?? Number.NaN);
  };
  for (const name of names) {
    if (name.startsWith("scalar:")) out[name] = scalar(name.slice(7));
    else if (name === "evaporated") out[name] = scalar("evaporated_final");
    else if (name === "msd_final") out[name] = scalar("msd_final");
    else if (name === "cluster_radius") out[name] = lastColumn(db, ids, "cluster_rms_radius");
    else if (name === "vortex_count") out[name] = lastColumn(db, ids, "object_count");
    else if (name === "line_length") out[name] = lastColumn(db, ids, "line_length");
    else if (name === "centre_speed") out[name] = centreSpeed(db, ids);
    else {
      throw new RangeError(
        `unknown quantity '${name}': use one of ${QUANTITIES.map((q) => q.name).join(", ")} or scalar:<name>`,
      );
    }
  }
  return out;
}
