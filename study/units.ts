/**
 * The units a study's numbers are in, in words, for `spindrift check` and `run`: lengths, times, circulation,
 * what a fitted diffusion coefficient comes out as (D/κ or D in m²/s), and how to convert. A study in κ units
 * whose length unit is metric (`lengthUnit: µm`) is told plainly that its time unit is µm²/κ, with the value of
 * that unit in seconds for ⁴He.
 *
 * @example
 * ```ts
 * for (const line of describeUnits(study).lines) console.log(line);
 * // units: lengths in µm, times in µm²/κ, circulation in κ (κ = 1): D comes out as D/κ (dimensionless)
 * // note: µm²/κ is not a second: for ⁴He (κ = 9.9693e-8 m²/s) it is 1.003e-5 s; D in m²/s = D/κ × κ
 * ```
 */
import { findEngine } from "../engines/registry.ts";
import { diffusionUnit, timeInKappaUnits, unitSentences } from "../engines/units.ts";
import type { NormalizedStudy } from "./normalize.ts";

/** A study's units and how to read them. */
export interface UnitsDescription {
  readonly length: string;
  readonly time: string;
  readonly circulation: string;
  /** κ in the study's units when the engine states it (1 in κ units, 9.9693e-8 m²/s for ⁴He in SI). */
  readonly kappa?: number;
  /** True when the study measures circulation in κ (time unit length²/κ): D comes out as D/κ. */
  readonly kappaUnits: boolean;
  /** How D is labelled: "D/κ", or "D (m²/s)". */
  readonly diffusion: string;
  /** The description in words, one line each. */
  readonly lines: readonly string[];
}

/** The units of the study's first parameter point, as its engine declares them. */
export function describeUnits(study: NormalizedStudy): UnitsDescription {
  const engine = findEngine(study.engine.id);
  const scales = study.points.length > 0 ? engine?.scales?.(study.points[0].params as never) : undefined;
  const u = scales?.units ?? engine?.capabilities.units ?? { length: "ℓ", time: "ℓ²/κ", circulation: "κ" };
  const kappaUnits = timeInKappaUnits(u.time);
  const d = diffusionUnit(u);
  const kappa = scales?.circulation;
  const lines = unitSentences(u, kappa);
  return {
    length: u.length,
    time: u.time,
    circulation: u.circulation,
    ...(kappa !== undefined ? { kappa } : {}),
    kappaUnits,
    diffusion: d.header,
    lines,
  };
}
