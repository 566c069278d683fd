/**
 * The unit convention of `EngineCapabilities.units` and `Engine.scales().units`, read back: a time unit written
 * as a length squared over κ (`ℓ²/κ`, `µm²/κ`, `(patch radius)²/κ`) means the study measures circulation in κ
 * (κ = 1), so a diffusion coefficient comes out directly as D/κ; any other time unit (`s`, `ms`) means physical
 * units, and D comes out in length²/time (m²/s). Reports, `analyse` and `check` label D with it.
 *
 * @example
 * ```ts
 * diffusionUnit({ length: "ℓ", time: "ℓ²/κ" }); // { symbol: "D/κ", unit: null, header: "D/κ" }
 * diffusionUnit({ length: "m", time: "s" }); // { symbol: "D", unit: "m²/s", header: "D (m²/s)" }
 * ```
 */

/** κ of ⁴He in m²/s: h/m₄ from CODATA 2018 h and the ⁴He atomic mass (for unit conversions in messages). */
export const KAPPA_HELIUM4_SI = 9.9693e-8;

/** Units as engines declare them. */
export interface UnitLabels {
  readonly length: string;
  readonly time: string;
  readonly circulation?: string;
}

/** True when `time` is a length squared over κ: the study's circulation unit is κ. */
export function timeInKappaUnits(time: string): boolean {
  return /²\s*\/\s*κ\s*$/.test(time.trim());
}

/** A unit raised to the power two, parenthesised when it is more than one symbol: `m²`, `(2.5 µm)²`. */
export function squared(unit: string): string {
  return /^[^\s()]+$/.test(unit) ? `${unit}²` : `(${unit})²`;
}

/** How a diffusion coefficient of a study with these units is labelled (D/κ when units are unknown). */
export function diffusionUnit(
  units: UnitLabels | undefined,
): { readonly symbol: "D/κ" | "D"; readonly unit: string | null; readonly header: string } {
  if (units === undefined || timeInKappaUnits(units.time)) {
    return { symbol: "D/κ", unit: null, header: "D/κ" };
  }
  const time = /^[^\s()]+$/.test(units.time) ? units.time : `(${units.time})`;
  const unit = `${squared(units.length)}/${time}`;
  return { symbol: "D", unit, header: `D (${unit})` };
}

/**
 * Heading of one D estimate: "D/κ (MSD)" in κ units, "D (MSD, m²/s)" in physical units.
 *
 * @example
 * ```ts
 * diffusionHeading({ length: "m", time: "s" }, "D_R", "R_rms"); // "D_R (R_rms, m²/s)"
 * ```
 */
export function diffusionHeading(units: UnitLabels | undefined, symbol: string, how: string): string {
  const unit = diffusionUnit(units).unit;
  return unit === null ? `${symbol}/κ (${how})` : `${symbol} (${how}, ${unit})`;
}

/**
 * κ in a study's units as recorded with it (`units.kappa`, written since κ was recorded at run time): 1 for
 * studies in κ units (time unit length²/κ) whether recorded or not, the recorded value otherwise, undefined
 * when an older database did not record it.
 *
 * @example
 * ```ts
 * recordedKappa({ length: "m", time: "s", kappa: "9.9693e-8" }); // 9.9693e-8
 * recordedKappa({ length: "ℓ", time: "ℓ²/κ" }); // 1
 * ```
 */
export function recordedKappa(units: Readonly<Record<string, string | undefined>>): number | undefined {
  if (units.time !== undefined && timeInKappaUnits(units.time)) return 1;
  const k = units.kappa === undefined ? Number.NaN : Number(units.kappa);
  return Number.isFinite(k) && k > 0 ? k : undefined;
}

/** Metres in one `length` when it is a plain metric length (`µm`, `2.5 um`, `nm`), else undefined. */
export function metresIn(length: string): number | undefined {
  const m = /^\s*(\d+(?:\.\d+)?(?:e[+-]?\d+)?)?\s*(m|cm|mm|µm|μm|um|nm)\s*$/.exec(length);
  if (!m) return undefined;
  const scale: Record<string, number> = {
    m: 1,
    cm: 1e-2,
    mm: 1e-3,
    "µm": 1e-6,
    "μm": 1e-6,
    um: 1e-6,
    nm: 1e-9,
  };
  return (m[1] === undefined ? 1 : Number(m[1])) * scale[m[2]];
}

function fmt(x: number): string {
  const a = Math.abs(x);
  return a !== 0 && (a < 1e-3 || a >= 1e5)
    ? x.toExponential(3).replace(/\.?0+e/, "e").replace("e+", "e")
    : String(Number(x.toPrecision(4)));
}

/**
 * A study's units in words, one sentence per line (what `check` prints and every report page shows): lengths,
 * times and circulation, what D comes out as, and how to convert; a study in κ units with a metric length unit
 * is told that its time unit is not a second, with its value for ⁴He.
 *
 * @example
 * ```ts
 * unitSentences({ length: "µm", time: "µm²/κ" });
 * // ["units: lengths in µm, times in µm²/κ, circulation in κ (κ = 1): D comes out as D/κ",
 * //  "note: µm²/κ is not a second: for ⁴He (κ = 9.9693e-8 m²/s) one µm²/κ is 1.003e-5 s; D in m²/s = D/κ × κ"]
 * ```
 */
export function unitSentences(u: UnitLabels, kappa?: number): string[] {
  const lines: string[] = [];
  if (timeInKappaUnits(u.time)) {
    lines.push(
      `units: lengths in ${u.length}, times in ${u.time}, circulation in κ (κ = 1): D comes out as D/κ`,
    );
    const metres = metresIn(u.length);
    if (metres !== undefined) {
      lines.push(
        `note: ${u.time} is not a second: for ⁴He (κ = ${KAPPA_HELIUM4_SI} m²/s) one ${u.time} is ` +
          `${fmt(metres * metres / KAPPA_HELIUM4_SI)} s; D in m²/s = D/κ × κ`,
      );
    } else {
      lines.push(
        `to convert: t in s = t × ℓ²/κ and D in m²/s = D/κ × κ, with ${
          u.length === "ℓ" ? "ℓ" : `ℓ = one ${u.length}`
        } in metres ` +
          `(κ = ${KAPPA_HELIUM4_SI} m²/s for ⁴He)`,
      );
    }
  } else {
    const k = kappa !== undefined && kappa !== 1 ? `, κ = ${kappa} ${u.circulation ?? ""}`.trimEnd() : "";
    lines.push(
      `units: lengths in ${u.length}, times in ${u.time}${k}: D comes out in ${
        diffusionUnit(u).unit
      } (D/κ = D divided by κ)`,
    );
  }
  return lines;
}
