/**
 * Units on the report pages: the study's units as recorded with it (labels and κ), the units section every page
 * shows, the unit of each stored scalar (and whether it is a physical result or a solver diagnostic), and
 * display scales that put physical-unit axes in readable prefixes (ms, µm) instead of 0.00004 s.
 *
 * A displayed number is `stored × factor`; axis titles carry the displayed unit. In κ units nothing is scaled.
 *
 * @example
 * ```ts
 * const u = reportUnits({ length: "m", time: "s", circulation: "m²/s", kappa: "9.9693e-8" });
 * timeScale(u, 0.004); // { factor: 1000, unit: "ms" }
 * lengthScale(u, 2.5e-5); // { factor: 1e6, unit: "µm" }
 * scalarInfo("rejected_steps"); // { label: "rejected steps", kind: "diagnostic", dim: "count" }
 * ```
 */
import {
  diffusionUnit,
  recordedKappa,
  squared,
  timeInKappaUnits,
  type UnitLabels,
  unitSentences,
} from "../engines/units.ts";
import { escapeHtml } from "./format.ts";

/** What the report knows of a study's units. */
export interface ReportUnits {
  /** Axis labels; undefined when the database recorded none (generic "length"/"time" wording). */
  readonly labels: UnitLabels | undefined;
  /** True in κ units (κ = 1; D comes out as D/κ). Also true when no units are recorded. */
  readonly kappaUnits: boolean;
  /** κ in the study's units: 1 in κ units, the recorded value in physical units, undefined if not recorded. */
  readonly kappa: number | undefined;
  /** How the stored D is labelled: "D/κ" or e.g. "D (m²/s)". */
  readonly dHeader: string;
  /** The stored D's unit ("m²/s"), null in κ units. */
  readonly dUnit: string | null;
}

/**
 * The units of a study revision from `studies.units_json` (and, for databases analysed before κ was recorded
 * with the units, κ from the stored Vinen fit's detail when given).
 */
export function reportUnits(
  recorded: Readonly<Record<string, string>>,
  fallbackKappa?: number,
): ReportUnits {
  const labels = recorded.length && recorded.time
    ? { length: recorded.length, time: recorded.time, circulation: recorded.circulation }
    : undefined;
  const kappaUnits = labels === undefined || timeInKappaUnits(labels.time);
  const kappa = kappaUnits ? 1 : recordedKappa(recorded) ?? fallbackKappa;
  const d = diffusionUnit(labels);
  return { labels, kappaUnits, kappa, dHeader: d.header, dUnit: d.unit };
}

/** A display scale: shown value = stored value × `factor`, in `unit`. */
export interface Scale {
  readonly factor: number;
  readonly unit: string;
}

const PREFIXES: readonly (readonly [number, string])[] = [
  [1, ""],
  [1e3, "m"],
  [1e6, "µ"],
  [1e9, "n"],
];

/** The SI prefix that puts `maxAbs` (in base units) between 0.1 and 1000. */
function prefixed(base: "m" | "s", maxAbs: number): Scale {
  if (!(maxAbs > 0) || !Number.isFinite(maxAbs)) return { factor: 1, unit: base };
  for (const [factor, p] of PREFIXES) if (maxAbs * factor >= 0.1) return { factor, unit: `${p}${base}` };
  const [factor, p] = PREFIXES[PREFIXES.length - 1];
  return { factor, unit: `${p}${base}` };
}

/** Display scale of times up to `maxAbs` (stored units): prefixed seconds in SI, as stored otherwise. */
export function timeScale(u: ReportUnits, maxAbs: number): Scale {
  const t = u.labels?.time;
  if (t === "s") return prefixed("s", maxAbs);
  return { factor: 1, unit: t ?? "" };
}

/** Display scale of lengths up to `maxAbs` (stored units): prefixed metres in SI, as stored otherwise. */
export function lengthScale(u: ReportUnits, maxAbs: number): Scale {
  const l = u.labels?.length;
  if (l === "m") return prefixed("m", maxAbs);
  return { factor: 1, unit: l ?? "" };
}

/** The square of a displayed length unit ("µm²", "(patch radius)²"; "" stays ""). */
export function squaredUnit(unit: string): string {
  return unit === "" ? "" : squared(unit);
}

/** "time t [ms]" or "time t" when the unit is unknown. */
export function axisTitle(what: string, unit: string): string {
  return unit === "" ? what : `${what} [${unit}]`;
}

/**
 * How D is shown on charts: D/κ whenever κ is known (dimensionless, comparable between studies), else D in the
 * stored unit. `factor` turns a stored D into the shown one.
 */
export function dDisplay(u: ReportUnits): { readonly factor: number; readonly title: string } {
  if (u.kappa !== undefined) return { factor: 1 / u.kappa, title: "D/κ" };
  return { factor: 1, title: u.dHeader };
}

/** The units section of a report page (escaped HTML): units in words, κ, and how to convert D. */
export function unitsSection(u: ReportUnits): string {
  const lines = u.labels === undefined
    ? [
      "units: not recorded with this study (a database from an early version): lengths and times are in the " +
      "study's own units; D is labelled D/κ on the assumption that circulation is measured in κ",
    ]
    : unitSentences(u.labels); // κ of a physical-unit study gets its own line below
  const extra: string[] = [];
  if (!u.kappaUnits) {
    extra.push(
      u.kappa !== undefined
        ? `κ = ${String(u.kappa)} ${u.labels?.circulation ?? ""} (recorded with the study): D/κ is ` +
          `shown beside D, and the charts show D/κ`
        : "κ was not recorded with this study (a database written before this version): D/κ cannot be " +
          "shown. Run the study once more with this version (nothing is recomputed) to record it",
    );
    if (u.labels?.time === "s" || u.labels?.length === "m") {
      extra.push("axes show SI prefixes where they read better (ms, µm); the numbers in tables are in SI");
    }
  }
  return `<section id="units"><h2>Units</h2><ul class="units">${
    [...lines, ...extra].map((l) => `<li>${escapeHtml(l)}</li>`).join("")
  }</ul></section>\n`;
}

/** Dimension of a stored scalar, rendered with the study's units by `dimUnit`. */
export type Dim = "count" | "1" | "length" | "length2" | "time" | "per-area" | "unknown";

export interface ScalarInfo {
  readonly label: string;
  /** Physical result (Results), or a solver internal (Diagnostics). */
  readonly kind: "physics" | "diagnostic";
  readonly dim: Dim;
}

/** The scalars the engines and observables of this build store (DEVELOPERS.md "Engines in this build"). */
const SCALARS: Readonly<Record<string, readonly [string, ScalarInfo["kind"], Dim]>> = {
  initial_count: ["vortices at t = 0", "physics", "count"],
  final_count: ["vortices at the end", "physics", "count"],
  initial_density: ["initial vortex density", "physics", "per-area"],
  min_separation_initial: ["smallest initial separation", "physics", "length"],
  annihilations: ["pair annihilations", "physics", "count"],
  wall_annihilations: ["annihilations at the wall", "physics", "count"],
  reconnections: ["reconnections", "physics", "count"],
  final_line_length: ["line length at the end", "physics", "length"],
  initial_line_density: ["initial line density", "physics", "per-area"],
  initial_rms_radius: ["initial RMS radius (engine)", "physics", "length"],
  initial_loop_count: ["loops at t = 0", "physics", "count"],
  alpha: ["mutual friction α", "physics", "1"],
  alpha_prime: ["mutual friction α′", "physics", "1"],
  wall_exits: ["vortices lost at the wall", "physics", "count"],
  disappearances: ["vortices vanished in the bulk", "physics", "count"],
  pair_creations: ["pairs created", "physics", "count"],
  wall_entries: ["vortices entering from the wall", "physics", "count"],
  appearances: ["vortices appearing in the bulk", "physics", "count"],
  annihilation_separation_mean: ["mean separation at annihilation", "physics", "length"],
  rms_radius_initial: ["initial RMS radius of the main cluster", "physics", "length"],
  evaporated_final: ["evaporated by the end", "physics", "count"],
  msd_final: ["MSD at the end (survivors)", "physics", "length2"],
  msd_all_final: ["MSD at the end (all objects)", "physics", "length2"],
  recaptured_final: ["recaptures by the end", "physics", "count"],
  steps: ["time steps", "diagnostic", "count"],
  rejected_steps: ["rejected steps (error control)", "diagnostic", "count"],
  rhs_evaluations: ["right-hand-side evaluations", "diagnostic", "count"],
  loops_removed: ["loops removed (below resolution)", "diagnostic", "count"],
  length_removed: ["line length removed with them", "diagnostic", "length"],
  initial_points: ["filament points at t = 0", "diagnostic", "count"],
  final_points: ["filament points at the end", "diagnostic", "count"],
  marker_transfers: ["marker transfers", "diagnostic", "count"],
  radius_rejected_fraction: ["ring radii redrawn (truncation)", "diagnostic", "1"],
  time_step: ["time step", "diagnostic", "time"],
  tracking_interval: ["tracking interval", "diagnostic", "time"],
  ground_state_mu: ["ground state μ (units of the bulk μ)", "diagnostic", "1"],
  ground_state_norm: ["ground state norm", "diagnostic", "1"],
  ground_state_residual: ["ground state residual", "diagnostic", "1"],
  ground_state_iterations: ["ground state iterations", "diagnostic", "count"],
  relaxed_mu: ["relaxed μ (units of the bulk μ)", "diagnostic", "1"],
  relaxed_norm: ["relaxed norm", "diagnostic", "1"],
  imprinted_count: ["vortices imprinted", "diagnostic", "count"],
  imprint_found: ["imprinted vortices found after relaxation", "diagnostic", "count"],
  profile_bin_width: ["profile bin width", "diagnostic", "length"],
  profile_bins: ["profile bins", "diagnostic", "count"],
  "import.rows": ["rows read", "diagnostic", "count"],
  "import.record_times": ["record times read", "diagnostic", "count"],
};

/** What a stored scalar is: its words, physics or diagnostic, its dimension (unknown names: physics, "unknown"). */
export function scalarInfo(name: string): ScalarInfo {
  const known = SCALARS[name];
  if (known) return { label: known[0], kind: known[1], dim: known[2] };
  if (name.startsWith("drift.")) {
    return {
      label: `relative drift of the ${name.slice(6).replace(/_/g, " ")}`,
      kind: "diagnostic",
      dim: "1",
    };
  }
  return { label: name.replace(/[._]/g, " "), kind: "physics", dim: "unknown" };
}

/** The unit of a dimension in the study's units ("" for counts and pure numbers, "?" when unknown). */
export function dimUnit(dim: Dim, u: ReportUnits): string {
  const l = u.labels?.length ?? "length";
  switch (dim) {
    case "count":
      return "count";
    case "1":
      return "";
    case "length":
      return l;
    case "length2":
      return squared(l);
    case "per-area":
      return `${squared(l)}⁻¹`.replace(/²⁻¹$/, "⁻²");
    case "time":
      return u.labels?.time ?? "time";
    default:
      return "not declared";
  }
}
