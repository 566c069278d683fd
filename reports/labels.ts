/**
 * Words and colours the report pages show instead of raw keys: a readable name per parameter point
 * ("initial count = 140" for `initial.count=140`), one colour per point that is the same in a study's report
 * and in `spindrift compare`, and readable names of the classification thresholds for the sensitivity table
 * ("outward angle 60° → 120°" for `outwardCosine*2`).
 *
 * @example
 * ```ts
 * pointNames([{ varied: { "initial.count": 100 }, label: "initial.count=100" }]); // ["initial count = 100"]
 * pointColour(1, 2); // "#f58518"
 * thresholdChange("outwardCosine*2", 0.5, -0.5); // "outward angle 60° → 120°"
 * ```
 */
import { formatNumber } from "./format.ts";

/** Vega's "tableau10" (studies with up to 10 points) and "tableau20" (more), by point index. */
const TABLEAU10 = [
  "#4c78a8",
  "#f58518",
  "#e45756",
  "#72b7b2",
  "#54a24b",
  "#eeca3b",
  "#b279a2",
  "#ff9da6",
  "#9d755d",
  "#bab0ac",
] as const;
const TABLEAU20 = [
  "#4c78a8",
  "#9ecae9",
  "#f58518",
  "#ffbf79",
  "#54a24b",
  "#88d27a",
  "#b79a20",
  "#f2cf5b",
  "#439894",
  "#83bcb6",
  "#e45756",
  "#ff9d98",
  "#79706e",
  "#bab0ac",
  "#d67195",
  "#fcbfd2",
  "#b279a2",
  "#d6a5c9",
  "#9e765f",
  "#d8b5a5",
] as const;

/** The colour of point `index` of a study with `count` points: the same on every page that shows the study. */
export function pointColour(index: number, count: number): string {
  return count <= 10 ? TABLEAU10[index % 10] : TABLEAU20[index % 20];
}

/** "initialCount" → "initial count"; "friction.alphaPrime" → "friction alpha prime". */
export function pathWords(path: string): string {
  const words = path.split(".").flatMap((seg) =>
    seg.replace(/([a-z0-9])([A-Z])/g, "$1 $2").replace(/[_-]+/g, " ").toLowerCase().split(/\s+/)
  ).filter((w) => w !== "");
  // "initial.initialCount" → "initial count": drop a word repeated right after itself.
  return words.filter((w, i) => i === 0 || w !== words[i - 1]).join(" ");
}

/** A swept value in words: numbers as they are, `{kind: temperature, temperature: 1.6}` as "temperature 1.6". */
export function valueWords(v: unknown): string {
  if (typeof v === "number") return Number.isInteger(v) ? String(v) : formatNumber(v);
  if (typeof v === "string") return v;
  if (typeof v === "boolean") return v ? "yes" : "no";
  if (Array.isArray(v)) return `[${v.map(valueWords).join(", ")}]`;
  if (typeof v === "object" && v !== null) {
    const rec = v as Record<string, unknown>;
    const kind = typeof rec.kind === "string" ? rec.kind : null;
    const rest = Object.entries(rec).filter(([k]) => k !== "kind")
      .map(([k, x]) => (k === kind ? valueWords(x) : `${pathWords(k)} ${valueWords(x)}`));
    return [kind, ...rest].filter((s) => s !== null && s !== "").join(" ");
  }
  return String(v);
}

/**
 * Readable, unique names of the points: the swept values in words ("initial count = 100", "friction: none"),
 * falling back to the stored label; a name shared by two points gets its index ("… (#2)").
 */
export function pointNames(
  points: readonly { readonly varied: Readonly<Record<string, unknown>>; readonly label: string }[],
): string[] {
  const names = points.map((p) => {
    const entries = Object.entries(p.varied);
    if (entries.length === 0) return p.label || "the study";
    return entries.map(([path, v]) =>
      typeof v === "object" && v !== null && !Array.isArray(v)
        ? `${pathWords(path)}: ${valueWords(v)}`
        : `${pathWords(path)} = ${valueWords(v)}`
    ).join(", ");
  });
  const seen = new Map<string, number>();
  for (const n of names) seen.set(n, (seen.get(n) ?? 0) + 1);
  return names.map((n, i) => ((seen.get(n) ?? 0) > 1 ? `${n} (#${i})` : n));
}

/** Words for the classification thresholds (`observables.classification`), with their symbols. */
const THRESHOLD_WORDS: Readonly<Record<string, string>> = {
  separationFactor: "dipole/ring size factor f",
  radiusFactor: "escape radius factor k",
  stickyFrames: "frames before a label changes K",
  speedTolerance: "self-propulsion speed tolerance",
  outwardCosine: "outward angle",
};

/** Degrees of the outward angle of an outward cosine c: arccos c. */
function angle(c: number): string {
  return `${Math.round((Math.acos(Math.max(-1, Math.min(1, c))) * 180) / Math.PI)}°`;
}

/**
 * A sensitivity row in words: "escape radius factor k 3 → 1.5"; the outward cosine is shown as its angle
 * ("outward angle 60° → 120°", the analysis varies the angle). `base` is the study's value, `varied` the row's.
 */
export function thresholdChange(row: string, base: number | null, varied: number | null): string {
  const [name, factor] = row.split("*");
  const words = THRESHOLD_WORDS[name] ?? pathWords(name);
  const show = (x: number) => (name === "outwardCosine" ? angle(x) : formatNumber(x));
  if (base !== null && varied !== null) return `${words} ${show(base)} → ${show(varied)}`;
  return `${words} × ${factor ?? "?"}`;
}
