/**
 * `spindrift export DB --ensemble results|series`: the ensemble level as CSV, for spreadsheets and data frames.
 *
 * - `results`: one row per stored ensemble result (`ensemble_results` of the latest revision): point, analysis,
 *   name, value with its interval, unit, level, interval method, status and reason; D-type rows of physical-unit
 *   studies also as D/κ (with the κ recorded with the study).
 * - `series`: per point, series and stored frame: t, realisations n, mean, standard deviation and the Student-t
 *   interval of the mean (as the report draws them); radial profiles (`profile.*`) are left out.
 *
 * One header line, no comment lines; numbers as the shortest decimal that round-trips to the same double.
 *
 * @example
 * ```ts
 * const csv = ensembleCsv("film.sqlite", "results"); // "point,label,analysis,name,value,…\n0,initial.count=100,…"
 * ```
 */
import { readEnsembleResults } from "../store/ensemble.ts";
import { openStoreReadOnly, readStudy } from "../store/reads.ts";
import { aggregateStudy } from "../reports/aggregate.ts";
import { diffusionUnit, recordedKappa, squared, timeInKappaUnits } from "../engines/units.ts";

export type EnsembleTable = "results" | "series";

function cell(v: unknown): string {
  if (v === null || v === undefined) return "";
  if (typeof v === "number") return Number.isFinite(v) ? String(v) : "";
  const s = typeof v === "string" ? v : JSON.stringify(v);
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

function line(values: readonly unknown[]): string {
  return values.map(cell).join(",");
}

/** Units of a stored result, from its analysis and name. */
function resultUnit(
  analysis: string,
  name: string,
  u: { d: string; time: string; length: string },
): { unit: string; isD: boolean } {
  const D = { unit: u.d, isD: true };
  if (analysis === "sensitivity") return D;
  if (analysis === "diffusion") {
    if (name.startsWith("D")) return D;
    if (name === "tau_c" || name.startsWith("window_")) {
      return { unit: u.time.replace(/^\((.*)\)$/, "$1"), isD: false };
    }
    return { unit: "1", isD: false };
  }
  if (analysis === "vinen") return name === "D" ? D : { unit: "1", isD: false };
  if (analysis === "evaporation") {
    if (name === "evaporated") return { unit: "count", isD: false };
    if (name === "t_half") return { unit: u.time.replace(/^\((.*)\)$/, "$1"), isD: false };
    if (name === "rate") return { unit: `1/${u.time}`, isD: false };
    return { unit: "1", isD: false };
  }
  if (analysis === "question") {
    if (name === "difference") return D;
    if (name === "trend_slope") return { unit: `${u.d} per unit of the swept parameter`, isD: false };
    return { unit: name === "ratio" ? "1" : "", isD: false };
  }
  if (analysis === "correlations") {
    if (name === "f_integral") return { unit: u.length, isD: false };
    if (name === "u_rms") return { unit: `${u.length}/${u.time}`, isD: false };
  }
  return { unit: "1", isD: false };
}

/** The CSV text of one ensemble table of the database's latest study revision. */
export function ensembleCsv(dbPath: string, table: EnsembleTable): string {
  const db = openStoreReadOnly(dbPath);
  try {
    const study = readStudy(db);
    const agg = aggregateStudy(db, { studyId: study.id });
    const lines: string[] = [];
    if (table === "series") {
      lines.push(line(["point", "label", "series", "k", "t", "n", "mean", "sd", "lower", "upper", "level"]));
      for (const p of agg.points) {
        for (const [name, b] of p.series) {
          if (name.startsWith("profile.")) continue;
          for (let j = 0; j < b.k.length; j++) {
            lines.push(line([
              p.point.index,
              p.point.label,
              name,
              b.k[j],
              b.t[j],
              b.n[j],
              b.mean[j],
              b.sd[j],
              b.lower[j],
              b.upper[j],
              agg.level,
            ]));
          }
        }
      }
      return lines.join("\n") + "\n";
    }
    const rec = study.units;
    const labels = rec.length && rec.time ? { length: rec.length, time: rec.time } : undefined;
    const results = readEnsembleResults(db, study.id);
    const kappaUnits = labels === undefined || timeInKappaUnits(labels.time);
    const vinenKappa = results.map((r) => r.detail.kappa).find((k): k is number => typeof k === "number");
    const kappa = kappaUnits ? 1 : recordedKappa(rec) ?? vinenKappa;
    const dUnit = diffusionUnit(labels).unit ?? "1 (D/κ)";
    const time = labels?.time ?? "time";
    const u = {
      d: dUnit,
      time: /^[^\s/()]+$/.test(time) ? time : `(${time})`,
      length: labels?.length ?? "length",
    };
    const index = new Map(agg.points.map((p) => [p.point.pointHash, p.point]));
    lines.push(line([
      "point",
      "label",
      "analysis",
      "name",
      "value",
      "lower",
      "upper",
      "unit",
      "value_over_kappa",
      "lower_over_kappa",
      "upper_over_kappa",
      "level",
      "interval",
      "status",
      "reason",
      "realisations",
    ]));
    for (const r of results) {
      const p = index.get(r.pointHash);
      const { unit, isD } = resultUnit(r.analysis, r.name, u);
      const over = (x: number | null) => (isD && kappa !== undefined && x !== null ? x / kappa : null);
      lines.push(line([
        p?.index ?? null,
        p?.label ?? r.pointHash,
        r.analysis,
        r.name,
        r.value,
        r.lower,
        r.upper,
        unit.replace("length²", squared(u.length)),
        over(r.value),
        over(r.lower),
        over(r.upper),
        r.detail.level ?? null,
        r.detail.interval ?? null,
        r.detail.status ?? (r.value === null ? null : "ok"),
        r.detail.reason ?? null,
        r.detail.realisations ?? null,
      ]));
    }
    return lines.join("\n") + "\n";
  } finally {
    db.close();
  }
}
