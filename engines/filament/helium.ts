/**
 * Mutual-friction coefficients α(T), α′(T) and the normal-fluid fraction ρ_n/ρ of He II at saturated vapour
 * pressure, as a small table with linear interpolation.
 *
 * Source key "DB1998": R.J. Donnelly, C.F. Barenghi, "The observed properties of liquid helium at the saturated
 * vapor pressure", J. Phys. Chem. Ref. Data 27, 1217 (1998), doi:10.1063/1.556028 (its mutual-friction
 * chapter builds on C.F. Barenghi, R.J. Donnelly, W.F. Vinen, J. Low Temp. Phys. 52, 189 (1983),
 * doi:10.1007/BF00682247).
 *
 * Status of the digits: every α, α′ row is FROM MEMORY (not yet checked against the 1998 tables); ρ_n/ρ at
 * 1.90–2.10 K is cross-checked against the superfluid densities of the same compilation (Table 2.1). Use the
 * table for plausible parameter studies, and give α, α′ directly for quantitative work. α′ is not tabulated
 * above 1.90 K (small, sign uncertain near T_λ): a lookup there is refused with a message.
 *
 * T = 0 is exact: no normal fluid, α = α′ = 0. Between 0 and 1.30 K there are no rows (α grows steeply with
 * T, so interpolating from 0 would be wrong): such temperatures are refused.
 *
 * @example
 * ```ts
 * import { heliumAt } from "./helium.ts";
 * const he = heliumAt(1.6); // { alpha: 0.098, alphaPrime: 0.016, normalFraction: 0.162, ... }
 * ```
 */

/** Reliability of a table row. */
export type RowStatus =
  | "exact"
  | "from memory"
  | "from memory, rough"
  | "density cross-checked; α, α′ from memory"
  | "density cross-checked; α from memory, rough; α′ not tabulated";

/** One tabulated temperature. */
export interface HeliumRow {
  /** Temperature, K. */
  readonly T: number;
  /** Normal-fluid fraction ρ_n/ρ (dimensionless). */
  readonly normalFraction: number;
  /** Mutual friction coefficient α (dimensionless). */
  readonly alpha: number;
  /** Mutual friction coefficient α′ (dimensionless); null where not tabulated. */
  readonly alphaPrime: number | null;
  readonly status: RowStatus;
  readonly source: "DB1998" | "exact";
}

/** The table (ascending T). Values as in the project's check-value sheet §4. */
export const HELIUM_TABLE: readonly HeliumRow[] = [
  { T: 0, normalFraction: 0, alpha: 0, alphaPrime: 0, status: "exact", source: "exact" },
  {
    T: 1.3,
    normalFraction: 0.045,
    alpha: 0.034,
    alphaPrime: 0.0138,
    status: "from memory",
    source: "DB1998",
  },
  {
    T: 1.5,
    normalFraction: 0.11,
    alpha: 0.07,
    alphaPrime: 0.017,
    status: "from memory, rough",
    source: "DB1998",
  },
  { T: 1.6, normalFraction: 0.162, alpha: 0.098, alphaPrime: 0.016, status: "from memory", source: "DB1998" },
  {
    T: 1.8,
    normalFraction: 0.31,
    alpha: 0.16,
    alphaPrime: 0.012,
    status: "from memory, rough",
    source: "DB1998",
  },
  {
    T: 1.9,
    normalFraction: 0.42,
    alpha: 0.206,
    alphaPrime: 0.0083,
    status: "density cross-checked; α, α′ from memory",
    source: "DB1998",
  },
  {
    T: 2.0,
    normalFraction: 0.56,
    alpha: 0.28,
    alphaPrime: null,
    status: "density cross-checked; α from memory, rough; α′ not tabulated",
    source: "DB1998",
  },
  {
    T: 2.1,
    normalFraction: 0.75,
    alpha: 0.48,
    alphaPrime: null,
    status: "density cross-checked; α from memory, rough; α′ not tabulated",
    source: "DB1998",
  },
];

/** Interpolated properties at one temperature. */
export interface HeliumProperties {
  readonly T: number;
  readonly alpha: number;
  readonly alphaPrime: number;
  /** ρ_n/ρ. */
  readonly normalFraction: number;
  /** ρ_n/ρ_s (for the counter-superflow of a heat current). */
  readonly normalToSuperRatio: number;
  /** Status of the rows used (the less reliable of the two bracketing rows). */
  readonly status: RowStatus;
}

/** Thrown for a temperature the table cannot serve; the message says what to do instead. */
export class HeliumRangeError extends RangeError {
  constructor(message: string) {
    super(message);
    this.name = "HeliumRangeError";
  }
}

const T_MIN_TABLE = 1.3;

/**
 * α, α′ and ρ_n/ρ at temperature T (kelvin) by linear interpolation between rows. T = 0 gives zeros.
 * Throws `HeliumRangeError` for 0 < T < 1.30 K, T > 2.10 K, T where α′ is not tabulated (> 1.90 K), or a
 * non-finite T.
 */
export function heliumAt(T: number): HeliumProperties {
  if (!Number.isFinite(T) || T < 0) {
    throw new HeliumRangeError(`temperature must be a finite number ≥ 0 K, got ${T}`);
  }
  if (T === 0) {
    return { T, alpha: 0, alphaPrime: 0, normalFraction: 0, normalToSuperRatio: 0, status: "exact" };
  }
  const last = HELIUM_TABLE[HELIUM_TABLE.length - 1];
  if (T < T_MIN_TABLE || T > last.T) {
    throw new HeliumRangeError(
      `temperature ${T} K is outside the mutual-friction table (T = 0 or ${T_MIN_TABLE}–${last.T} K, ` +
        `Donnelly & Barenghi 1998); give alpha and alphaPrime directly instead`,
    );
  }
  let k = 1;
  while (k < HELIUM_TABLE.length - 2 && HELIUM_TABLE[k + 1].T < T) k++;
  const a = HELIUM_TABLE[k];
  const b = HELIUM_TABLE[k + 1];
  if (a.alphaPrime === null || b.alphaPrime === null) {
    throw new HeliumRangeError(
      `α′ is not tabulated at ${T} K (above 1.9 K it is small and its sign uncertain); ` +
        `give alpha and alphaPrime directly instead`,
    );
  }
  const w = (T - a.T) / (b.T - a.T);
  const lerp = (p: number, q: number) => p + w * (q - p);
  const fn = lerp(a.normalFraction, b.normalFraction);
  const rank = (s: RowStatus) =>
    [
      "exact",
      "density cross-checked; α, α′ from memory",
      "from memory",
      "from memory, rough",
      "density cross-checked; α from memory, rough; α′ not tabulated",
    ].indexOf(s);
  return {
    T,
    alpha: lerp(a.alpha, b.alpha),
    alphaPrime: lerp(a.alphaPrime, b.alphaPrime),
    normalFraction: fn,
    normalToSuperRatio: fn / (1 - fn),
    status: rank(a.status) >= rank(b.status) ? a.status : b.status,
  };
}
