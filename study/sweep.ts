/**
 * Expanding a study's `sweep` into parameter settings.
 *
 * The sweep is a list of axes: one per `grid` path (in the order written), then one per `zip` group (in the
 * order written; all lists of a group have the same length and advance together). Settings are the cartesian
 * product of the axes with the first axis varying slowest (like nested loops written in file order). Without
 * a sweep, or with an empty one, there is a single setting: the base parameters (label "base").
 *
 * A setting replaces, for each swept dotted path (relative to `parameters`), the base value by the listed one;
 * the result is then parsed by the engine's schema (see `normalize.ts`).
 *
 * @example
 * ```ts
 * const settings = expandSweep({ grid: { "initial.count": [32, 64] }, zip: [{ "friction.alpha": [0, 0.1] }] });
 * settings.map((s) => pointLabel(s.varied));
 * // ["initial.count=32, friction.alpha=0", "initial.count=32, friction.alpha=0.1",
 * //  "initial.count=64, friction.alpha=0", "initial.count=64, friction.alpha=0.1"]
 * applySetting({ initial: { count: 8, radius: 1 } }, settings[0].varied); // { initial: { count: 32, radius: 1 } }
 * ```
 */
import type { StudyFile } from "./schema.ts";
import { splitSweepPath } from "./schema.ts";

/** The `sweep` section of a validated study. */
export type Sweep = NonNullable<StudyFile["sweep"]>;

/** One independent direction of the sweep: a grid path, or a zip group of paths varied together. */
export interface SweepAxis {
  /** Dotted paths set by this axis (one for a grid path, one or more for a zip group). */
  readonly paths: readonly string[];
  /** `values[j]` lists the values of `paths[j]`. */
  readonly values: readonly (readonly unknown[])[];
  /** Number of settings along the axis. */
  readonly length: number;
  /** Where the lists are, relative to `sweep`: `["grid", path]` or `["zip", g, path]` for each path. */
  readonly sites: readonly (readonly (string | number)[])[];
}

/** One combination of swept values. */
export interface SweepSetting {
  /** Swept path → value, in axis order. */
  readonly varied: Readonly<Record<string, unknown>>;
  /** For each swept path, where its value sits in the file, relative to `sweep` (e.g. `["grid", p, 2]`). */
  readonly sources: Readonly<Record<string, readonly (string | number)[]>>;
}

/** The axes of a sweep in expansion order: grid paths first, then zip groups. */
export function sweepAxes(sweep: Sweep | undefined): SweepAxis[] {
  const axes: SweepAxis[] = [];
  if (!sweep) return axes;
  for (const [path, list] of Object.entries(sweep.grid ?? {})) {
    axes.push({ paths: [path], values: [list], length: list.length, sites: [["grid", path]] });
  }
  (sweep.zip ?? []).forEach((group, g) => {
    const entries = Object.entries(group);
    if (entries.length === 0) return;
    axes.push({
      paths: entries.map(([p]) => p),
      values: entries.map(([, l]) => l),
      length: Math.min(...entries.map(([, l]) => l.length)),
      sites: entries.map(([p]) => ["zip", g, p]),
    });
  });
  return axes;
}

/** Number of parameter points the sweep expands to (1 without a sweep). */
export function countPoints(sweep: Sweep | undefined): number {
  return sweepAxes(sweep).reduce((n, a) => n * a.length, 1);
}

/** Every setting of the sweep, first axis slowest. */
export function expandSweep(sweep: Sweep | undefined): SweepSetting[] {
  const axes = sweepAxes(sweep);
  const total = axes.reduce((n, a) => n * a.length, 1);
  const settings: SweepSetting[] = [];
  const idx = new Array<number>(axes.length).fill(0);
  for (let k = 0; k < total; k++) {
    const varied: Record<string, unknown> = {};
    const sources: Record<string, readonly (string | number)[]> = {};
    axes.forEach((axis, a) => {
      axis.paths.forEach((p, j) => {
        varied[p] = axis.values[j][idx[a]];
        sources[p] = [...axis.sites[j], idx[a]];
      });
    });
    settings.push({ varied, sources });
    for (let a = axes.length - 1; a >= 0; a--) {
      if (++idx[a] < axes[a].length) break;
      idx[a] = 0;
    }
  }
  return settings;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

/**
 * A deep copy of `base` with every swept path set to its value. Missing intermediate maps are created (the
 * engine's schema then fills its defaults around the swept value).
 */
export function applySetting(
  base: Readonly<Record<string, unknown>>,
  varied: Readonly<Record<string, unknown>>,
): Record<string, unknown> {
  const out = structuredClone(base) as Record<string, unknown>;
  for (const [path, value] of Object.entries(varied)) {
    const keys = splitSweepPath(path);
    let node = out;
    for (const k of keys.slice(0, -1)) {
      if (!isRecord(node[k])) node[k] = {};
      node = node[k] as Record<string, unknown>;
    }
    node[keys[keys.length - 1]] = structuredClone(value);
  }
  return out;
}

/** A value in YAML flow style: `64`, `gaussian`, `[0, 0]`, `{kind: disk, radius: 5}`. */
function flowText(v: unknown): string {
  if (typeof v === "string") {
    return /^[A-Za-z0-9_.+-][A-Za-z0-9_. +-]*$/.test(v) && v.trim() === v ? v : JSON.stringify(v);
  }
  if (Array.isArray(v)) return `[${v.map(flowText).join(", ")}]`;
  if (typeof v === "object" && v !== null) {
    return `{${Object.entries(v).map(([k, w]) => `${flowText(k)}: ${flowText(w)}`).join(", ")}}`;
  }
  return String(v);
}

/** Human label of a setting: `initial.count=64, friction.alpha=0.01`, or `base` when nothing is swept. */
export function pointLabel(varied: Readonly<Record<string, unknown>>): string {
  const entries = Object.entries(varied);
  return entries.length === 0 ? "base" : entries.map(([p, v]) => `${p}=${flowText(v)}`).join(", ");
}
