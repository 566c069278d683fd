/**
 * Units of imported data and their conversion to the study's units.
 *
 * A study that imports data says what one study unit is (`parameters.units`), and each column says what its
 * values are in (`columns.<name>.unit`, optionally times a plain `scale`). The conversion factor turns a raw
 * value into study units: `value_study = raw × factor`.
 *
 * Length units: `m`, `cm`, `mm`, `um` (also `µm`, `μm`), `nm`, and `xi` (also `ξ`, the healing length; a
 * value in metres is needed only when ξ meets a metric unit). Time units: `s`, `ms`, `us` (also `µs`, `μs`),
 * `ns`. Circulation: `kappa` (multiples of the quantum κ) or `sign` (only the sign is kept: ±κ).
 * A column without a unit is already in study units (times its `scale`, default 1).
 *
 * Method: metric units are powers of ten, so the ratio of two metric units is formed from the difference of
 * their decimal exponents (`10^Δ` parsed from its decimal form, hence correctly rounded), and equal units give
 * the factor 1 exactly — a conversion that does nothing never perturbs the data.
 *
 * References: BIPM, The International System of Units (SI), 9th ed. (2019), Table 7 (SI prefixes).
 *
 * @example
 * ```ts
 * const units = { length: { value: 2.5, unit: "um" } } as const;
 * lengthFactor({ unit: "nm" }, units); // 1e-3 / 2.5 = 0.0004: 1 nm is 0.0004 study lengths of 2.5 µm
 * ```
 */

import { squared } from "../units.ts";

/** Accepted length unit symbols. */
export const LENGTH_UNITS = ["m", "cm", "mm", "um", "µm", "μm", "nm", "xi", "ξ"] as const;
/** Accepted time unit symbols. */
export const TIME_UNITS = ["s", "ms", "us", "µs", "μs", "ns"] as const;
/** Accepted circulation units. */
export const CIRCULATION_UNITS = ["kappa", "sign"] as const;

export type LengthUnit = typeof LENGTH_UNITS[number];
export type TimeUnit = typeof TIME_UNITS[number];
export type CirculationUnit = typeof CIRCULATION_UNITS[number];

/** Decimal exponent of each metric length unit relative to the metre; `null` marks the healing length ξ. */
const LENGTH_EXPONENT: Readonly<Record<LengthUnit, number | null>> = {
  m: 0,
  cm: -2,
  mm: -3,
  um: -6,
  "µm": -6,
  "μm": -6,
  nm: -9,
  xi: null,
  "ξ": null,
};

/** Decimal exponent of each time unit relative to the second. */
const TIME_EXPONENT: Readonly<Record<TimeUnit, number>> = {
  s: 0,
  ms: -3,
  us: -6,
  "µs": -6,
  "μs": -6,
  ns: -9,
};

/** A physical quantity: a positive value in a unit (e.g. the study length unit is 2.5 µm). */
export interface Quantity<U extends string> {
  readonly value: number;
  readonly unit: U;
}

/** What one study unit is, as given in `parameters.units` (all optional). */
export interface StudyUnits {
  /** One study length unit (a bare unit symbol means value 1). */
  readonly length?: LengthUnit | Quantity<LengthUnit>;
  /** One study time unit. */
  readonly time?: TimeUnit | Quantity<TimeUnit>;
  /** The healing length ξ in a metric unit; needed only when ξ meets a metric unit. */
  readonly healingLength?: Quantity<LengthUnit>;
  /** The circulation quantum κ in m²/s; with a physical length and no `time`, the time unit is ℓ²/κ. */
  readonly kappa?: number;
}

/** A column's unit and plain scale factor. */
export interface ColumnUnit<U extends string> {
  readonly unit?: U;
  readonly scale?: number;
}

/** Thrown when a unit cannot be converted; the message says what is missing. */
export class UnitError extends Error {
  /** Where the problem is in the study's `parameters` (e.g. ["units", "healingLength"]). */
  readonly path: readonly (string | number)[];
  constructor(message: string, path: readonly (string | number)[]) {
    super(message);
    this.name = "UnitError";
    this.path = path;
  }
}

function quantity<U extends string>(q: U | Quantity<U>): Quantity<U> {
  return typeof q === "string" ? { value: 1, unit: q } : q;
}

/** 10^e, correctly rounded (parsed from its decimal form rather than computed by repeated products). */
function pow10(e: number): number {
  return e === 0 ? 1 : Number(`1e${e}`);
}

/**
 * A length expressed as (multiplier, decimal exponent of the metre, or "xi" when it is a multiple of ξ), so that
 * ratios of like units can be formed exactly.
 */
interface LengthTerm {
  readonly value: number;
  readonly exponent: number | "xi";
}

function lengthTerm(q: Quantity<LengthUnit>): LengthTerm {
  const e = LENGTH_EXPONENT[q.unit];
  return { value: q.value, exponent: e === null ? "xi" : e };
}

/** Expresses a multiple of ξ in metric terms, using `units.healingLength`. */
function xiInMetres(term: LengthTerm, units: StudyUnits, needFor: string): LengthTerm {
  if (term.exponent !== "xi") return term;
  const h = units.healingLength;
  if (h === undefined) {
    throw new UnitError(
      `${needFor} mixes the healing length ξ with a metric unit; give units.healingLength (e.g. ` +
        "{ value: 0.5, unit: um }) so ξ can be converted",
      ["units", "healingLength"],
    );
  }
  const ht = lengthTerm(h);
  if (ht.exponent === "xi") {
    throw new UnitError("units.healingLength must be in a metric unit (m, cm, mm, um, nm), not ξ", [
      "units",
      "healingLength",
      "unit",
    ]);
  }
  return { value: term.value * ht.value, exponent: ht.exponent };
}

/** Ratio a/b of two lengths; exact (1) when both are the same unit with the same multiplier. */
function lengthRatio(a: LengthTerm, b: LengthTerm, units: StudyUnits, needFor: string): number {
  if (a.exponent === b.exponent) return a.value / b.value;
  const am = xiInMetres(a, units, needFor);
  const bm = xiInMetres(b, units, needFor);
  return (am.value / bm.value) * pow10((am.exponent as number) - (bm.exponent as number));
}

/**
 * Factor turning a raw length column into study length units.
 * Throws `UnitError` when the column has a unit but the study's length unit is not defined physically, or ξ
 * meets a metric unit without `units.healingLength`.
 *
 * @example
 * ```ts
 * lengthFactor({ unit: "um", scale: 0.16 }, { length: "um" }); // 0.16 (pixels of 0.16 µm)
 * ```
 */
export function lengthFactor(
  column: ColumnUnit<LengthUnit>,
  units: StudyUnits,
  columnName = "length",
): number {
  const scale = column.scale ?? 1;
  if (column.unit === undefined) return scale;
  if (units.length === undefined) {
    throw new UnitError(
      `column '${columnName}' is in ${column.unit}, but units.length does not say what one study length unit ` +
        `is (e.g. units: { length: { value: 1, unit: ${column.unit} } })`,
      ["units", "length"],
    );
  }
  const ratio = lengthRatio(
    lengthTerm({ value: 1, unit: column.unit }),
    lengthTerm(quantity(units.length)),
    units,
    `column '${columnName}' (${column.unit}) with units.length (${quantity(units.length).unit})`,
  );
  return scale * ratio;
}

/** One study time unit as (value, decimal exponent of the second). */
function studyTimeTerm(
  units: StudyUnits,
  columnName: string,
  columnUnit: string,
): { value: number; exponent: number } {
  if (units.time !== undefined) {
    const q = quantity(units.time);
    return { value: q.value, exponent: TIME_EXPONENT[q.unit] };
  }
  if (units.kappa !== undefined && units.length !== undefined) {
    // Study time unit T = ℓ²/κ with ℓ in metres and κ in m²/s.
    const l = xiInMetres(lengthTerm(quantity(units.length)), units, "units.length with units.kappa");
    const lm = l.value * pow10(l.exponent as number);
    return { value: (lm * lm) / units.kappa, exponent: 0 };
  }
  throw new UnitError(
    `column '${columnName}' is in ${columnUnit}, but units.time does not say what one study time unit is ` +
      `(give units.time, e.g. { value: 1, unit: ${columnUnit} }, or units.length with units.kappa for ℓ²/κ)`,
    ["units", "time"],
  );
}

/**
 * Factor turning a raw time column into study time units.
 *
 * @example
 * ```ts
 * timeFactor({ unit: "ms" }, { time: { value: 2, unit: "s" } }); // 0.0005
 * ```
 */
export function timeFactor(column: ColumnUnit<TimeUnit>, units: StudyUnits, columnName = "t"): number {
  const scale = column.scale ?? 1;
  if (column.unit === undefined) return scale;
  const study = studyTimeTerm(units, columnName, column.unit);
  const e = TIME_EXPONENT[column.unit];
  if (e === study.exponent) return scale / study.value;
  return (scale / study.value) * pow10(e - study.exponent);
}

/** How a circulation column is read: multiply by `factor` (unit kappa), or keep only the sign. */
export interface CirculationReading {
  readonly asSign: boolean;
  readonly factor: number;
}

/** How to read a circulation column (`kappa` values × scale, or `sign` → ±1). */
export function circulationReading(column: ColumnUnit<CirculationUnit>): CirculationReading {
  return { asSign: column.unit === "sign", factor: column.scale ?? 1 };
}

/** A length quantity (number = study units, or value + unit) in study length units. */
export function lengthInStudyUnits(
  q: number | Quantity<LengthUnit>,
  units: StudyUnits,
  what: string,
): number {
  if (typeof q === "number") return q;
  return q.value * lengthFactor({ unit: q.unit }, units, what);
}

const SYMBOL: Readonly<Record<string, string>> = { um: "µm", "μm": "µm", xi: "ξ", us: "µs", "μs": "µs" };

function unitText<U extends string>(q: U | Quantity<U>): string {
  const { value, unit } = quantity(q);
  const symbol = SYMBOL[unit] ?? unit;
  return value === 1 ? symbol : `${value} ${symbol}`;
}

/**
 * Labels of the study units `units` defines, for reports and `spindrift check`: e.g. { length: "2.5 µm", time:
 * "ms" }. Without units.time the study time unit is ℓ²/κ (the files' own unit, or ℓ²/κ with units.kappa), so
 * a fitted D is D/κ; give units.time when the files' times are in seconds.
 *
 * @example
 * ```ts
 * studyUnitLabels({ length: "um", time: { value: 0.5, unit: "ms" } }); // { length: "µm", time: "0.5 ms", … }
 * studyUnitLabels({}); // { length: "ℓ", time: "ℓ²/κ", circulation: "κ" }
 * ```
 */
export function studyUnitLabels(
  units: StudyUnits | undefined,
): { length: string; time: string; circulation: string } {
  const length = units?.length !== undefined ? unitText(units.length) : "ℓ";
  const time = units?.time !== undefined ? unitText(units.time) : `${squared(length)}/κ`;
  return { length, time, circulation: "κ" };
}
