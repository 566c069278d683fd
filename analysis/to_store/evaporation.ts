/**
 * The `evaporation` rows of `spindrift analyse`: how many objects evaporated by the end of the run, how fast
 * (t½ and the half-life rate) and what fraction of the vortex number (2D) or line length (3D) was lost, with
 * bootstrap intervals over realisations (`analysis/estimators/evaporation.ts`).
 */
import type { DatabaseSync } from "node:sqlite";
import { type EvaporationEstimate, evaporationSummary } from "../estimators/evaporation.ts";
import { isDatabaseError, readAlignedSeries } from "../../store/reads.ts";
import type { EnsembleResultInput } from "../../store/ensemble.ts";

type Push = (analysis: string, name: string, e: Partial<EnsembleResultInput>) => void;

/** What `analyse` prints about evaporation for one point. */
export interface EvaporationAnalysis {
  readonly status: "ok" | "not-available" | "error";
  readonly reason: string | null;
  /** Objects evaporated by the end (2D: vortices; 3D: loops), t½, rate (objects per time), lost fraction. */
  readonly evaporated: EvaporationEstimate | null;
  readonly tHalf: EvaporationEstimate | null;
  readonly rate: EvaporationEstimate | null;
  readonly lostFraction: EvaporationEstimate | null;
  readonly tEnd: number | null;
  readonly objects: "vortices" | "loops";
}

export interface EvaporationContext {
  readonly db: DatabaseSync;
  readonly ids: readonly number[];
  readonly dimension: 2 | 3;
  readonly seed: string;
  readonly replicates: number;
  readonly level: number;
}

/** Computes and pushes the `evaporation` rows (`evaporated`, `t_half`, `rate`, `lost_fraction`). */
export function evaporationRows(ctx: EvaporationContext, push: Push): EvaporationAnalysis {
  const objects = ctx.dimension === 3 ? "loops" as const : "vortices" as const;
  const none = (status: "not-available" | "error", reason: string): EvaporationAnalysis => {
    push("evaporation", "evaporated", { value: null, detail: { status, reason } });
    return {
      status,
      reason,
      evaporated: null,
      tHalf: null,
      rate: null,
      lostFraction: null,
      tEnd: null,
      objects,
    };
  };
  if (ctx.ids.length === 0) return none("not-available", "no done realisation at this point");
  try {
    const ev = readAlignedSeries(ctx.db, ctx.ids, "evaporated_count");
    if (ev.k.length === 0) {
      return none(
        "not-available",
        "no done realisation recorded the 'evaporated_count' series (add evaporation to observables.record)",
      );
    }
    const amountName = ctx.dimension === 3 ? "line_length" : "object_count";
    const amount = readAlignedSeries(ctx.db, ctx.ids, amountName);
    const col = new Map<number, number>();
    amount.k.forEach((k, j) => col.set(k, j));
    const aligned = amount.k.length === 0
      ? undefined
      : amount.values.map((row) =>
        Float64Array.from(ev.k, (k) => {
          const j = col.get(k);
          return j === undefined ? Number.NaN : row[j];
        })
      );
    const t0 = ev.t[0];
    const t = Float64Array.from(ev.t, (x) => x - t0);
    const s = evaporationSummary(
      { t, evaporated: ev.values, ...(aligned ? { amount: aligned } : {}) },
      { seed: ctx.seed, replicates: ctx.ids.length >= 2 ? ctx.replicates : 0, level: ctx.level },
    );
    const detail = (e: EvaporationEstimate, extra: Record<string, unknown>) => ({
      status: "ok",
      reason: null,
      seed: ctx.seed,
      replicates: ctx.ids.length >= 2 ? ctx.replicates : 0,
      level: ctx.level,
      interval: e.method,
      objects,
      tEnd: s.tEnd,
      ...extra,
    });
    const put = (name: string, e: EvaporationEstimate, extra: Record<string, unknown>) =>
      push("evaporation", name, {
        value: e.value,
        lower: e.interval?.lower ?? null,
        upper: e.interval?.upper ?? null,
        detail: detail(e, extra),
      });
    put("evaporated", s.evaporated, {
      definition: `ensemble-mean ${objects} evaporated by the end of the run`,
      series: { t: Array.from(t), mean: Array.from(s.mean, (v) => (Number.isFinite(v) ? v : null)) },
    });
    put("t_half", s.tHalf, { definition: "first time half of the final evaporated count is reached" });
    put("rate", s.rate, { definition: `evaporated/(2 t½): ${objects} per unit time during the first half` });
    if (s.lostFraction) {
      put("lost_fraction", s.lostFraction, {
        definition: ctx.dimension === 3
          ? "1 − total line length at the end / at the start (sums over realisations)"
          : "1 − vortex count at the end / at the start (sums over realisations)",
      });
    }
    return {
      status: "ok",
      reason: null,
      evaporated: s.evaporated,
      tHalf: s.tHalf,
      rate: s.rate,
      lostFraction: s.lostFraction,
      tEnd: s.tEnd,
      objects,
    };
  } catch (e) {
    if (isDatabaseError(e)) throw e;
    return none("error", e instanceof Error ? e.message : String(e));
  }
}
