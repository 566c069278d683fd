/**
 * `spindrift report`: writes the page and its figures, and says in the terminal what the page can and cannot
 * show: no stored analysis yet (run `analyse` first), an analysis older than the data, or a run still going on,
 * for which it computes a provisional analysis of the done realisations (D and its interval as they come in;
 * shown on the page as unfinished, never stored: the writer lock belongs to the run).
 *
 * @example
 * ```ts
 * const lines = await reportCommand("runs/film.sqlite", { out: "runs/film.html", png: true });
 * lines.forEach((l) => console.log(l));
 * ```
 */
import { analyseStudy } from "../analysis/mod.ts";
import { MIN_REALISATIONS } from "../analysis/estimators/bootstrap.ts";
import { asStoredResults, readEnsembleResults } from "../store/ensemble.ts";
import { openStoreReadOnly, readRealisations, readStudy, readStudyPoints } from "../store/reads.ts";
import { type FigureOptions, writeReport, type WriteReportOptions } from "../reports/mod.ts";
import { UserError } from "./errors.ts";
import { userFacing } from "./analyse.ts";

export interface ReportCommandOptions extends FigureOptions {
  readonly out: string;
  /** For an unfinished run, compute a provisional analysis for the page (default true). */
  readonly live?: boolean;
  /** Bootstrap replicates of the provisional analysis (default 500). */
  readonly liveReplicates?: number;
}

/** Where a study stands: realisations planned and done, and what the stored analysis used. */
export interface ReportState {
  readonly planned: number | null;
  readonly done: number;
  /** Running (or interrupted) rows. */
  readonly running: number;
  /** Smallest number of done realisations over the points. */
  readonly minDone: number;
  /** Rows stored in ensemble_results for the revision. */
  readonly stored: number;
  /** Points whose stored answer used another number of done realisations than the database now holds. */
  readonly stale: number;
}

/** Reads the study's state for the report command (latest revision). */
export function reportState(dbPath: string): ReportState {
  const db = openStoreReadOnly(dbPath);
  try {
    const study = readStudy(db);
    const norm = study.normalized as { realisations?: unknown } | null;
    const per = typeof norm?.realisations === "number" ? norm.realisations : null;
    const points = readStudyPoints(db, study.id);
    const results = readEnsembleResults(db, study.id, { analysis: "diffusion" });
    let done = 0, running = 0, minDone = Infinity, stale = 0;
    for (const p of points) {
      const rows = readRealisations(db, p.pointHash, { seed: study.seed })
        .filter((r) => per === null || r.index < per);
      const d = rows.filter((r) => r.status === "done").length;
      done += d;
      running += rows.filter((r) => r.status === "running").length;
      minDone = Math.min(minDone, d);
      const answer = results.find((r) => r.pointHash === p.pointHash && r.name === "D");
      if (answer && typeof answer.detail.realisations === "number" && answer.detail.realisations !== d) {
        stale++;
      }
    }
    return {
      planned: per === null ? null : per * points.length,
      done,
      running,
      minDone: Number.isFinite(minDone) ? minDone : 0,
      stored: readEnsembleResults(db, study.id).length,
      stale,
    };
  } finally {
    db.close();
  }
}

/** Writes the report; returns the lines to print (notes first, then the files). */
export async function reportCommand(dbPath: string, o: ReportCommandOptions): Promise<string[]> {
  const lines: string[] = [];
  const state = reportState(dbPath);
  const unfinished = state.running > 0 || (state.planned !== null && state.done < state.planned);
  let provisional: WriteReportOptions["provisional"];
  if (unfinished && o.live !== false && state.minDone >= 2) {
    const replicates = o.liveReplicates ?? 500;
    const computedAt = new Date().toISOString();
    try {
      const s = await analyseStudy(dbPath, {
        store: false,
        replicates,
        sensitivity: false,
        correlations: false,
        vinen: false,
        workers: 1,
      });
      provisional = {
        results: asStoredResults(s.studyId, s.rows ?? [], computedAt),
        analysis: { computedAt, replicates },
      };
    } catch (e) {
      throw userFacing(e, dbPath);
    }
    lines.push(
      `the run is unfinished (${state.done} of ${
        state.planned ?? "?"
      } realisations done): the page shows a ` +
        `provisional analysis of the done ones (B = ${replicates}; not stored); report again to update it, ` +
        `and run spindrift analyse ${dbPath} when the run has finished`,
    );
    if (state.minDone < MIN_REALISATIONS) {
      lines.push(
        `  (as few as ${state.minDone} done at a point: intervals are unreliable below ${MIN_REALISATIONS})`,
      );
    }
  } else if (unfinished) {
    lines.push(
      `the run is unfinished (${state.done} of ${state.planned ?? "?"} realisations done)${
        state.minDone < 2 ? ": too few done for a provisional analysis" : ""
      }; the page says so`,
    );
  } else if (state.stored === 0) {
    lines.push(
      `note: no analysis is stored for this study, so the page has no D/κ, intervals or fit window; run ` +
        `spindrift analyse ${dbPath} first, then spindrift report again`,
    );
  } else if (state.stale > 0) {
    lines.push(
      `note: the stored analysis is older than the data at ${state.stale} point(s); run spindrift analyse ` +
        `${dbPath} again`,
    );
  }
  const res = await writeReport(dbPath, { out: o.out, provisional, figures: o });
  lines.push(`report: ${res.html}`);
  lines.push(`figures (SVG${o.png ? ", PNG" : ""} and the plotted data as CSV): ${res.figuresDir}`);
  return lines;
}

/** Parser of a positive number option (`--font-scale 1.5`). */
export function positiveNumber(flag: string, max = Infinity): (v: string) => number {
  return (v: string): number => {
    const x = Number(v);
    if (v.trim() === "" || !Number.isFinite(x) || x <= 0 || x > max) {
      throw new UserError(`${flag} must be a number > 0${max < Infinity ? ` and ≤ ${max}` : ""}, got '${v}'`);
    }
    return x;
  };
}
