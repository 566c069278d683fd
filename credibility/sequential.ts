/**
 * `spindrift run STUDY --until RESULT=TARGET`: run until a named result is precise enough, with honest
 * coverage. The rule is Stein's two-stage procedure (C. Stein, Ann. Math. Statist. 16, 243 (1945); formulas and
 * caveats in `analysis/estimators/stein.ts` and docs/methods.md §5.8):
 *
 * ```
 * stage 1: the study as written (realisations = n₀) ──▶ per point the spread s₁ of RESULT
 *          ──▶ N_p = max(n₀, ⌈(t_{0.975, n₀−1}·s₁/h_p)²⌉), capped ──▶ N = max over points (one count per study)
 * stage 2: a revision of the study with realisations = N (same point hashes and seeds: realisations n₀ … N−1
 *          are the next indices), run in batches ──▶ per point x̄_N ± t·s₁/√N  (s₁ from stage 1, not recomputed)
 * ──▶ ensemble_results rows (analysis "precision") of the extended revision, which `analyse` and the report use
 * ```
 *
 * The total is fixed by the first stage alone, never by looking at the growing interval (which under-covers),
 * so a rerun finds the same stage-1 numbers, the same N and the same stored realisations, and computes
 * nothing. Using the largest N_p at every point keeps the coverage of each point (N does not depend on that
 * point's second-stage values). Results: "D" (only where the first stage shows a diffusive regime; s₁ is then
 * the bootstrap standard error × √n₀), the end-of-run quantities of `analysis/from_store/quantities.ts`
 * ("evaporated", "cluster_radius", …) and any stored scalar ("scalar:<name>"). Targets are absolute
 * (in the result's unit) or relative ("10%": h = 0.1·|x̄₁|, approximate coverage, see the caveats).
 */
import { QUANTITIES, readQuantities, subsetDiffusion } from "../analysis/mod.ts";
import { meanAndSd, steinInterval, type SteinPlan, steinSampleSize } from "../analysis/estimators/mod.ts";
import { findEngine } from "../engines/registry.ts";
import { type NormalizedStudy, withRealisations } from "../study/normalize.ts";
import { type RunReport, runStudy } from "../study/runner.ts";
import { type RunContext, runContext } from "./_run.ts";
import { StudyStore } from "../store/db.ts";
import { type EnsembleResultInput, replaceEnsembleResults } from "../store/ensemble.ts";
import { openStoreReadOnly, readRealisations } from "../store/reads.ts";

/** What `--until` asks for. */
export interface UntilTarget {
  /** "D", a quantity name, or "scalar:<name>". */
  readonly result: string;
  readonly target: number;
  readonly relative: boolean;
}

/** Parses "evaporated=10%", "D=0.02", "scalar:annihilations=5%" (throws RangeError with the fix). */
export function parseUntil(text: string): UntilTarget {
  const m = /^\s*([A-Za-z_][\w.:-]*)\s*=\s*([0-9.eE+-]+)\s*(%?)\s*$/.exec(text);
  const known = ["D", ...QUANTITIES.map((q) => q.name)];
  if (!m) {
    throw new RangeError(
      `--until takes RESULT=TARGET, e.g. D=10% or evaporated=0.5, got '${text}' (results: ${
        known.join(", ")
      }, scalar:<name>)`,
    );
  }
  const [, result, num, pct] = m;
  if (!known.includes(result) && !result.startsWith("scalar:")) {
    throw new RangeError(`--until: unknown result '${result}' (results: ${known.join(", ")}, scalar:<name>)`);
  }
  const x = Number(num) / (pct ? 100 : 1);
  if (!(x > 0 && Number.isFinite(x))) {
    throw new RangeError(`--until: the target must be > 0, got '${num}${pct}'`);
  }
  return { result, target: x, relative: pct === "%" };
}

export interface SequentialOptions extends RunContext {
  /** Most realisations per point (default max(100, 10·n₀)). */
  readonly cap?: number;
  /** Realisations added per point between progress reports (default n₀). */
  readonly batch?: number;
  /** Progress lines between batches. */
  readonly onBatch?: (line: string) => void;
  readonly force?: boolean;
  readonly keepFailed?: boolean;
  readonly fresh?: boolean;
  /** Bootstrap replicates for D (default 2000). */
  readonly replicates?: number;
}

/** One point's plan and outcome. */
export interface SequentialPoint {
  readonly index: number;
  readonly label: string;
  readonly pointHash: string;
  /** "planned": Stein's N from stage 1; otherwise why the point cannot be planned on this result. */
  readonly status: "planned" | "no-diffusive-regime" | "not-recorded" | "too-few" | "zero-mean";
  readonly reason: string | null;
  readonly stage1: { readonly n: number; readonly mean: number; readonly sd: number } | null;
  readonly halfWidth: number | null;
  readonly plan: SteinPlan | null;
  /** After stage 2: realisations used, the estimate and Stein's interval (null when not available). */
  readonly final: {
    readonly n: number;
    readonly value: number;
    readonly lower: number;
    readonly upper: number;
    readonly halfWidth: number;
  } | null;
  readonly finalNote: string | null;
}

export interface SequentialReport {
  readonly stage1: RunReport;
  readonly stage2: RunReport | null;
  readonly n0: number;
  readonly total: number;
  readonly cap: number;
  readonly until: UntilTarget;
  readonly points: readonly SequentialPoint[];
  readonly interrupted: boolean;
  readonly dbPath: string;
}

const RULE = "Stein's two-stage procedure (C. Stein, Ann. Math. Statist. 16, 243 (1945)): N = max(n₀, " +
  "⌈(t·s₁/h)²⌉) from the first stage, interval x̄_N ± t·s₁/√N with t = t_{0.975, n₀−1}; exact for normal " +
  "values, approximate for skewed ones, for relative targets and for D";

/** Per-point values (or the D estimate) of the result over realisations with index below `below`. */
function stageStats(
  dbPath: string,
  study: NormalizedStudy,
  until: UntilTarget,
  below: number,
  replicates: number,
): {
  ids: number[];
  stats: { n: number; mean: number; sd: number } | null;
  reason: string | null;
  regime: boolean;
}[] {
  const engine = findEngine(study.engine.id);
  const dimension = engine?.capabilities.dimension ?? 2;
  const db = openStoreReadOnly(dbPath);
  try {
    return study.points.map((p) => {
      const ids = readRealisations(db, p.pointHash, { seed: study.seed })
        .filter((r) => r.status === "done" && r.index < below).map((r) => r.id);
      if (until.result === "D") {
        const ev = ids.length >= 2
          ? subsetDiffusion(db, { engineId: study.engine.id, params: p.params, dimension }, ids, {
            seed: `${study.hash}/${p.pointHash}/sequential/${below}`,
            replicates,
          })
          : null;
        if (ev === null) return { ids, stats: null, reason: "no tracks to analyse", regime: false };
        const c = ev.estimators.cohort;
        const se = c?.ci?.standardError ?? null;
        if (ev.status !== "ok" || !c || se === null) {
          return { ids, stats: null, reason: ev.reasons[0] ?? "no diffusive regime", regime: false };
        }
        return {
          ids,
          stats: { n: ids.length, mean: c.D, sd: se * Math.sqrt(ids.length) },
          reason: null,
          regime: true,
        };
      }
      const values = readQuantities(db, ids, [until.result])[until.result];
      const s = meanAndSd(values);
      if (s.n === 0) {
        return { ids, stats: null, reason: `no realisation recorded ${until.result}`, regime: false };
      }
      return { ids, stats: s, reason: null, regime: false };
    });
  } finally {
    db.close();
  }
}

/** Runs stage 1, plans with Stein's rule, runs stage 2 in batches and stores the final intervals. */
export async function runUntilPrecise(
  study: NormalizedStudy,
  until: UntilTarget,
  opts: SequentialOptions,
): Promise<SequentialReport> {
  const n0 = study.realisations;
  const cap = opts.cap ?? Math.max(100, 10 * n0);
  if (!(cap >= n0)) {
    throw new RangeError(`--max-realisations (${cap}) is below the study's realisations (${n0})`);
  }
  const batch = Math.max(1, opts.batch ?? n0);
  const replicates = opts.replicates ?? 2000;
  const base = {
    ...runContext(opts),
    force: opts.force,
    keepFailed: opts.keepFailed,
  };
  const stage1 = await runStudy(study, { ...base, fresh: opts.fresh });
  const report = (
    points: SequentialPoint[],
    total: number,
    stage2: RunReport | null,
    interrupted: boolean,
  ): SequentialReport => ({
    stage1,
    stage2,
    n0,
    total,
    cap,
    until,
    points,
    interrupted,
    dbPath: opts.dbPath,
  });
  if (stage1.interrupted) return report([], n0, null, true);
  const first = stageStats(opts.dbPath, study, until, n0, replicates);
  const planned: SequentialPoint[] = study.points.map((p, i) => {
    const f = first[i];
    const head = { index: p.index, label: p.label, pointHash: p.pointHash, final: null, finalNote: null };
    if (f.stats === null) {
      const status = until.result === "D" && f.reason !== "no tracks to analyse"
        ? "no-diffusive-regime" as const
        : "not-recorded" as const;
      return { ...head, status, reason: f.reason, stage1: null, halfWidth: null, plan: null };
    }
    if (!(f.stats.n >= 2) || !Number.isFinite(f.stats.sd)) {
      return {
        ...head,
        status: "too-few",
        reason: `${f.stats.n} done realisation(s) in the first stage: Stein's rule needs ≥ 2`,
        stage1: f.stats,
        halfWidth: null,
        plan: null,
      };
    }
    const h = until.relative ? until.target * Math.abs(f.stats.mean) : until.target;
    if (!(h > 0)) {
      return {
        ...head,
        status: "zero-mean",
        reason:
          `the first-stage mean is 0: a relative target of ${100 * until.target} % is undefined; give ` +
          "an absolute half-width",
        stage1: f.stats,
        halfWidth: null,
        plan: null,
      };
    }
    const plan = steinSampleSize({ n: f.stats.n, sd: f.stats.sd }, { halfWidth: h, cap });
    return { ...head, status: "planned", reason: null, stage1: f.stats, halfWidth: h, plan };
  });
  const total = Math.max(n0, ...planned.flatMap((p) => (p.plan ? [p.plan.total] : [])));
  let stage2: RunReport | null = null;
  let interrupted = false;
  const extended = total > n0 ? withRealisations(study, total) : study;
  if (total > n0) {
    const notes = [{
      kind: "sequential",
      id: `${until.result}=${until.relative ? `${100 * until.target}%` : until.target}`,
      reason: `extended from ${n0} to ${total} realisations per point by ${RULE}`,
    }];
    for (let upto = Math.min(total, n0 + batch);; upto = Math.min(total, upto + batch)) {
      stage2 = await runStudy(extended, {
        ...base,
        skipPreflight: upto > n0 + batch,
        notes,
        only: (r) => r.index < upto,
      });
      if (stage2.interrupted) {
        interrupted = true;
        break;
      }
      opts.onBatch?.(batchLine(opts.dbPath, study, until, planned, upto));
      if (upto >= total) break;
    }
  }
  if (interrupted) return report(planned, total, stage2, true);
  const last = stageStats(opts.dbPath, extended, until, total, replicates);
  const points = planned.map((p, i): SequentialPoint => {
    if (!p.plan) return p;
    const l = last[i];
    if (l.stats === null) {
      return { ...p, finalNote: `after ${total} realisations: ${l.reason ?? "no estimate"}` };
    }
    const ci = steinInterval(p.plan, l.stats.mean, l.stats.n);
    return { ...p, final: { n: l.stats.n, value: l.stats.mean, ...ci } };
  });
  const store = StudyStore.open(opts.dbPath, { command: "run --until" });
  try {
    const studyId = store.db.prepare("SELECT id FROM studies WHERE study_hash = ?").get(extended.hash) as {
      id: number;
    };
    replaceEnsembleResults(store, Number(studyId.id), precisionRows(until, points, { n0, total, cap }), {
      analyses: ["precision"],
      whole: true,
    });
  } finally {
    store.close();
  }
  return report(points, total, stage2, false);
}

/** "after 24 per point: point a: 3.1 ± 0.4 (n 24); …" — the running estimate between batches (not a stop rule). */
function batchLine(
  dbPath: string,
  study: NormalizedStudy,
  until: UntilTarget,
  planned: readonly SequentialPoint[],
  upto: number,
): string {
  if (until.result === "D") return `  ${upto} realisations per point stored`;
  const now = stageStats(dbPath, study, until, upto, 0);
  const parts = planned.map((p, i) => {
    const s = now[i].stats;
    if (!p.plan || s === null) return `${p.label}: —`;
    return `${p.label}: ${fmt(s.mean)} ± ${fmt(steinInterval(p.plan, s.mean, s.n).halfWidth)} (n = ${s.n})`;
  });
  return `  ${upto} per point (running estimate; the total was fixed by the first stage): ${
    parts.join("; ")
  }`;
}

function fmt(x: number): string {
  if (!Number.isFinite(x)) return "—";
  const a = Math.abs(x);
  return a !== 0 && (a >= 1e4 || a < 1e-3) ? x.toExponential(2) : String(Number(x.toPrecision(3)));
}

/** The `precision` rows (see DEVELOPERS.md). */
export function precisionRows(
  until: UntilTarget,
  points: readonly SequentialPoint[],
  sizes: { readonly n0: number; readonly total: number; readonly cap: number },
): EnsembleResultInput[] {
  return points.map((p) => ({
    pointHash: p.pointHash,
    analysis: "precision",
    name: until.result,
    value: p.final?.value ?? null,
    lower: p.final?.lower ?? null,
    upper: p.final?.upper ?? null,
    detail: {
      status: p.status === "planned" && p.final ? "ok" : p.status === "planned" ? "not-available" : p.status,
      reason: p.reason ?? p.finalNote,
      rule: RULE,
      target: until.target,
      relative: until.relative,
      halfWidthTarget: p.halfWidth,
      n0: sizes.n0,
      stage1: p.stage1,
      required: p.plan?.required ?? null,
      total: sizes.total,
      cap: sizes.cap,
      reachable: p.plan?.reachable ?? null,
      used: p.final?.n ?? null,
      halfWidth: p.final?.halfWidth ?? null,
      t: p.plan?.t ?? null,
      level: 0.95,
      note: until.result === "D"
        ? "s₁ = bootstrap standard error × √n₀ of the first stage (large-sample); `analyse` gives the bootstrap " +
          "interval of the full sample"
        : null,
    },
  }));
}

/** The report as lines. */
export function formatSequential(r: SequentialReport): string[] {
  const u = r.until;
  const target = u.relative ? `±${Number((100 * u.target).toPrecision(3))} %` : `±${u.target}`;
  const lines = [
    `run until ${u.result} is known to ${target} (95 %), by Stein's two-stage rule: first stage ${r.n0} per ` +
    `point, cap ${r.cap}`,
  ];
  for (const p of r.points) {
    const s = p.stage1;
    const head = `  point ${p.index} (${p.label}): `;
    if (!p.plan) {
      lines.push(`${head}not planned: ${p.reason}`);
      continue;
    }
    lines.push(
      `${head}first stage ${s!.n}: ${fmt(s!.mean)}, sd ${fmt(s!.sd)} → needs ${p.plan.required}` +
        (p.plan.reachable ? "" : ` (capped at ${p.plan.total}: the target is not reached)`),
    );
    if (p.final) {
      lines.push(
        `    with ${p.final.n}: ${u.result} = ${fmt(p.final.value)} [${fmt(p.final.lower)}, ${
          fmt(p.final.upper)
        }] (half-width ${fmt(p.final.halfWidth)}${
          p.halfWidth !== null && p.final.halfWidth <= p.halfWidth + 1e-12 ? ", target met" : ""
        })`,
      );
    } else if (p.finalNote) lines.push(`    ${p.finalNote}`);
  }
  lines.push(
    r.total > r.n0
      ? `every point now has ${r.total} realisations (the largest need; one count per study), recorded as a ` +
        "new revision of the study that analyse and report use"
      : "the first stage is enough everywhere: nothing added",
  );
  lines.push(
    "caveat: the interval is exact for normally distributed values; for skewed ones (rare counts), relative " +
      "targets and D it is approximate (docs/methods.md §5.8)",
  );
  return lines;
}
