/**
 * The `sensitivity` rows (docs/methods.md §4 and §5.7): the stored frames are replayed through the classifier with each
 * classification threshold halved and doubled (others at their study values): separationFactor,
 * radiusFactor, speedTolerance multiplied; stickyFrames multiplied and rounded (≥ 1); outwardCosine c varied
 * through its angle θ = arccos c (θ/2 and min(2θ, 180°)), since doubling a cosine leaves its range. 11 rows:
 * base + 5 × 2. Each row is the whole diffusion analysis (`estimators/diffusion.ts`: window, three estimators,
 * the rule) on the replayed labels, with fewer bootstrap replicates; its value is the answer D (null without a
 * diffusive regime, the reasons in the detail). The base row must reproduce the analysis of the stored labels
 * (recorded as `matchesStored`).
 */
import type { ClassificationConfig } from "../../engines/observables/contract.ts";
import { checkClassificationConfig } from "../../engines/observables/mod.ts";
import { pickInterval } from "../estimators/bootstrap.ts";
import { diffusionEvidence } from "../estimators/diffusion.ts";
import { prepareTracks } from "../estimators/tracks.ts";
import { readControls } from "../from_store/series.ts";
import type { ReplayContext, StoredTracks } from "../from_store/tracks.ts";
import { errorText, finiteOrNull } from "../_util.ts";
import type { DiffusionAnalysis } from "./diffusion.ts";
import type { AnalysisStatus, PointContext, Push } from "./rows.ts";

/** What `analyse` reports about the sensitivity table of one point. */
export interface SensitivityAnalysis {
  readonly status: AnalysisStatus;
  readonly reason: string | null;
  readonly rows: readonly { readonly name: string; readonly D: number | null; readonly status: string }[];
}

const THRESHOLDS = [
  "separationFactor",
  "radiusFactor",
  "stickyFrames",
  "outwardCosine",
  "speedTolerance",
] as const;
const FACTORS = [0.5, 2] as const;

/** The varied configuration for one threshold and factor (see the module comment for the rules). */
export function variedThreshold(
  base: ClassificationConfig,
  name: typeof THRESHOLDS[number],
  factor: number,
): ClassificationConfig {
  let value: number;
  if (name === "stickyFrames") value = Math.max(1, Math.round(base.stickyFrames * factor));
  else if (name === "outwardCosine") {
    const theta = Math.acos(Math.max(-1, Math.min(1, base.outwardCosine)));
    value = Math.cos(Math.min(Math.PI, theta * factor));
  } else value = base[name] * factor;
  return { ...base, [name]: value };
}

/** The classifications to replay for one point, or why there is no sensitivity table. */
export type SensitivityPlan =
  | {
    readonly configs: readonly {
      readonly name: string;
      readonly threshold: string | null;
      readonly factor: number;
      readonly config: ClassificationConfig;
      readonly problems: readonly string[];
    }[];
    /** The valid configurations, in the order the replay returns their labels. */
    readonly valid: readonly ClassificationConfig[];
    readonly context: ReplayContext;
  }
  | { readonly status: AnalysisStatus; readonly reason: string };

/** What to replay (base + each threshold × ½ and × 2), or the reason there is nothing to replay. */
export function sensitivityPlan(ctx: PointContext): SensitivityPlan {
  if (ctx.opts.sensitivity === false) {
    return { status: "not-available", reason: "not requested (--no-sensitivity)" };
  }
  if (ctx.capabilities === null) {
    return {
      status: "not-available",
      reason: `the engine '${ctx.study.engineId}' is not in this build: its frames cannot be classified`,
    };
  }
  if (ctx.classification === null) {
    return { status: "not-available", reason: "the stored study has no classification thresholds" };
  }
  const base = ctx.classification;
  const configs = [{ name: "base", threshold: null as string | null, factor: 1, config: base }];
  for (const th of THRESHOLDS) {
    for (const f of FACTORS) {
      configs.push({ name: `${th}*${f}`, threshold: th, factor: f, config: variedThreshold(base, th, f) });
    }
  }
  const withProblems = configs.map((c) => ({ ...c, problems: checkClassificationConfig(c.config) }));
  return {
    configs: withProblems,
    valid: withProblems.filter((c) => c.problems.length === 0).map((c) => c.config),
    context: {
      capabilities: ctx.capabilities,
      controls: readControls(ctx.point.controls),
      coreRadius: ctx.coreRadius,
    },
  };
}

/** Analyses every replayed classification and pushes the `sensitivity` rows. */
export function sensitivityRows(
  ctx: PointContext,
  plan: SensitivityPlan,
  tracks: StoredTracks | null,
  diffusion: DiffusionAnalysis,
  push: Push,
): SensitivityAnalysis {
  const none = (status: AnalysisStatus, reason: string) => {
    push("sensitivity", "base", { value: null, detail: { status, reason } });
    return { status, reason, rows: [] };
  };
  if ("reason" in plan) return none(plan.status, plan.reason);
  if (tracks === null || diffusion.prepared === null) {
    return none("not-available", "no stored tracks to replay");
  }
  try {
    ctx.progress(`  threshold sensitivity: ${plan.valid.length} replayed classifications`);
    const Bs = ctx.ids.length >= 2 ? (ctx.opts.sensitivityReplicates ?? 200) : 0;
    const seed = `${ctx.base}/${ctx.point.pointHash}/sensitivity`;
    let baseD: number | null = null;
    const out: { name: string; D: number | null; status: string }[] = [];
    for (const c of plan.configs) {
      const detailBase = {
        threshold: c.threshold,
        factor: c.factor,
        thresholdValue: c.threshold === null ? null : c.config[c.threshold as keyof ClassificationConfig],
        config: c.config,
        seed,
        replicates: Bs,
        level: ctx.level,
      };
      if (c.problems.length > 0) {
        push("sensitivity", c.name, {
          value: null,
          detail: { ...detailBase, status: "error", reason: c.problems.join("; ") },
        });
        out.push({ name: c.name, D: null, status: "error" });
        continue;
      }
      const labels = tracks.replayed[plan.valid.indexOf(c.config)];
      const prepared = prepareTracks({
        ...tracks.ensemble,
        realisations: tracks.ensemble.realisations.map((r, i) => ({ ...r, main: labels[i] })),
      });
      const ev = diffusionEvidence(prepared, {
        seed,
        replicates: Bs,
        level: ctx.level,
        tCut: diffusion.cut?.tCut ?? undefined,
      });
      const D = ev.answer?.D ?? null;
      const cohort = ev.estimators.cohort;
      const ci = pickInterval(cohort?.ci ?? null);
      if (c.threshold === null) baseD = D;
      const extra: Record<string, unknown> = {};
      if (c.threshold === null) {
        // The stored labels come from the same classifier and thresholds: the replay must agree exactly.
        const stored = diffusion.estimators.find((e) => e.name === "cohort")?.D ?? null;
        const replayed = cohort?.D ?? null;
        extra.storedD = stored;
        extra.matchesStored = (stored === null && replayed === null) ||
          (stored !== null && replayed !== null && Math.abs(stored - replayed) <= 1e-9 * Math.abs(stored));
      } else {
        extra.deltaD = D !== null && baseD !== null ? D - baseD : null;
        extra.relativeDelta = D !== null && baseD !== null && baseD !== 0 ? (D - baseD) / baseD : null;
      }
      push("sensitivity", c.name, {
        value: D,
        lower: D !== null ? ci.lower : null,
        upper: D !== null ? ci.upper : null,
        detail: {
          ...detailBase,
          status: ev.status,
          reason: ev.reasons[0] ?? null,
          reasons: ev.reasons,
          window: ev.window,
          support: ev.support?.fraction ?? null,
          interval: ci.method,
          fitted: cohort ? { D: cohort.D, lower: ci.lower, upper: ci.upper } : null,
          exponents: Object.fromEntries(
            (["origin", "cohort", "lag"] as const).map((
              k,
            ) => [k, finiteOrNull(ev.estimators[k]?.exponent.value ?? NaN)]),
          ),
          ...extra,
        },
      });
      out.push({ name: c.name, D, status: ev.status });
    }
    return { status: "ok", reason: null, rows: out };
  } catch (e) {
    return none("error", errorText(e));
  }
}
