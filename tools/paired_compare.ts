/**
 * Paired comparison of two runs of the same study (e.g. before and after an engine change): realisations are
 * paired by parameter point and index — same seeds, so the same initial conditions — and for each per-
 * realisation scalar the mean paired difference gets a 95 % Student-t interval; the two ensemble means and
 * standard deviations are printed beside it. A difference whose interval excludes 0 is flagged.
 *
 *   deno run --allow-read tools/paired_compare.ts BEFORE.sqlite AFTER.sqlite [scalar …]
 *
 * References: W.S. Gosset ("Student"), Biometrika 6, 1 (1908) (t distribution); the paired t interval is
 * textbook statistics (e.g. J.A. Rice, Mathematical Statistics and Data Analysis, 3rd ed. (2007) §11.3).
 */
import { DatabaseSync } from "node:sqlite";
import { studentTQuantile } from "../analysis/estimators/_jstat.ts";

const DEFAULT = [
  "final_line_length",
  "reconnections",
  "loops_removed",
  "evaporated_final",
  "msd_final",
  "drift.impulse",
  "drift.energy",
];

/** scalar name → (point label + index) → value, for finished realisations. */
function scalars(path: string): Map<string, Map<string, number>> {
  const db = new DatabaseSync(path, { readOnly: true });
  try {
    const rows = db.prepare(
      "SELECT s.name AS name, sp.label AS label, r.idx AS idx, s.value AS value FROM scalars s " +
        "JOIN realisations r ON r.id = s.realisation_id JOIN study_points sp ON sp.point_hash = r.point_hash " +
        "WHERE r.status = 'done' AND sp.study_id = (SELECT MAX(id) FROM studies)",
    ).all() as { name: string; label: string; idx: number; value: number | null }[];
    const out = new Map<string, Map<string, number>>();
    for (const r of rows) {
      if (r.value === null) continue;
      const m = out.get(r.name) ?? new Map<string, number>();
      m.set(`${r.label}#${r.idx}`, r.value);
      out.set(r.name, m);
    }
    return out;
  } finally {
    db.close();
  }
}

function meanSd(v: number[]): [number, number] {
  const m = v.reduce((a, b) => a + b, 0) / v.length;
  const s = Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / Math.max(1, v.length - 1));
  return [m, s];
}

if (import.meta.main) {
  const [before, after, ...names] = Deno.args;
  if (!before || !after) {
    console.error(
      "usage: deno run --allow-read tools/paired_compare.ts BEFORE.sqlite AFTER.sqlite [scalar …]",
    );
    Deno.exit(2);
  }
  const a = scalars(before), b = scalars(after);
  console.log(
    "scalar | pairs | before mean ± sd | after mean ± sd | paired Δ = after − before [95 % t] | verdict",
  );
  for (const name of names.length > 0 ? names : DEFAULT) {
    const ma = a.get(name), mb = b.get(name);
    if (!ma || !mb) {
      console.log(`${name} | — | not in both databases`);
      continue;
    }
    const keys = [...ma.keys()].filter((k) => mb.has(k)).sort();
    if (keys.length < 2) {
      console.log(`${name} | ${keys.length} | too few pairs`);
      continue;
    }
    const va = keys.map((k) => ma.get(k)!), vb = keys.map((k) => mb.get(k)!);
    const [m1, s1] = meanSd(va), [m2, s2] = meanSd(vb);
    const [md, sd] = meanSd(vb.map((v, i) => v - va[i]));
    const half = studentTQuantile(0.975, keys.length - 1) * sd / Math.sqrt(keys.length);
    const verdict = md - half > 0 || md + half < 0 ? "DIFFERENT (interval excludes 0)" : "consistent with 0";
    const f = (x: number) => x.toPrecision(4);
    console.log(
      `${name} | ${keys.length} | ${f(m1)} ± ${f(s1)} | ${f(m2)} ± ${f(s2)} | ${f(md)} [${f(md - half)}, ${
        f(md + half)
      }] | ${verdict}`,
    );
  }
}
