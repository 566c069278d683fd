/**
 * The `sensitivity` rows (methods §4): the stored frames are replayed through the classifier and the msd
 * observable with each threshold halved and doubled (others at their study values): separationFactor,
 * radiusFactor, speedTolerance multiplied; stickyFrames multiplied and rounded (≥ 1); outwardCosine c varied
 * through its angle θ = arccos c (θ/2 and min(2θ, 180°)), since doubling a cosine leaves its range. 11 rows:
 * base + 5 × 2. The base row must reproduce the stored-series fit (recorded as `matchesStored`).
 */
import type { ClassificationConfig } from "../../engines/observables/contract.ts";
import { checkClassificationConfig } from "../../engines/observables/mod.ts";
import { type DiffusionFit, fitDiffusion } from "../estimators/msd_fit.ts";
import { replayMsdEnsembles } from "../from_store/replay.ts";
import { readControls, type StoredEnsemble } from "../from_store/series.ts";
import { errorText } from "../_util.ts";
import { type AnalysisStatus, pickInterval, type PointContext, type Push } from "./rows.ts";

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

export async function sensitivityRows(
  ctx: PointContext,
  fit: DiffusionFit | null,
  ens: StoredEnsemble | null,
  push: Push,
): Promise<SensitivityAnalysis> {
  const none = (status: AnalysisStatus, reason: string) => {
    push("sensitivity", "base", { value: null, detail: { status, reason } });
    return { status, reason, rows: [] };
  };
  if (ctx.opts.sensitivity === false) return none("not-available", "not requested (--no-sensitivity)");
  if (ens === null) return none("not-available", "no MSD series to compare with");
  if (ctx.capabilities === null) {
    return none(
      "not-available",
      `the engine '${ctx.study.engineId}' is not in this build: its frames cannot be classified`,
    );
  }
  if (ctx.classification === null) {
    return none("not-available", "the stored study has no classification thresholds");
  }
  try {
    const base = ctx.classification;
    const configs: {
      name: string;
      threshold: string | null;
      factor: number;
      config: ClassificationConfig;
    }[] = [
      { name: "base", threshold: null, factor: 1, config: base },
    ];
    for (const th of THRESHOLDS) {
      for (const f of FACTORS) {
        configs.push({ name: `${th}*${f}`, threshold: th, factor: f, config: variedThreshold(base, th, f) });
      }
    }
    const valid = configs.filter((c) => checkClassificationConfig(c.config).length === 0);
    ctx.progress(`  threshold sensitivity: replaying stored frames with ${valid.length} classifications`);
    const controls = readControls(ctx.point.controls);
    const ensembles = replayMsdEnsembles(
      ctx.db,
      ctx.ids,
      { capabilities: ctx.capabilities, controls, coreRadius: ctx.coreRadius },
      valid.map((c) => c.config),
    );
    await Promise.resolve();
    const Bs = ctx.ids.length >= 2 ? (ctx.opts.sensitivityReplicates ?? 200) : 0;
    const seed = `${ctx.base}/${ctx.point.pointHash}/sensitivity`;
    let baseD: number | null = null;
    const out: { name: string; D: number | null; status: string }[] = [];
    for (const c of configs) {
      const problems = checkClassificationConfig(c.config);
      const detailBase = {
        threshold: c.threshold,
        factor: c.factor,
        thresholdValue: c.threshold === null ? null : c.config[c.threshold as keyof ClassificationConfig],
        config: c.config,
        seed,
        replicates: Bs,
        level: ctx.level,
      };
      if (problems.length > 0) {
        push("sensitivity", c.name, {
          value: null,
          detail: { ...detailBase, status: "error", reason: problems.join("; ") },
        });
        out.push({ name: c.name, D: null, status: "error" });
        continue;
      }
      const e = ensembles[valid.indexOf(c)];
      const f = fitDiffusion(e, {
        dimension: ctx.dimension,
        seed,
        replicates: Bs,
        level: ctx.level,
        tCut: ens.tCut ?? undefined,
      });
      const ci = pickInterval(f.ci);
      if (c.threshold === null) baseD = f.D;
      const extra: Record<string, unknown> = {};
      if (c.threshold === null) {
        const stored = fit?.D ?? null;
        extra.storedD = stored;
        extra.matchesStored = stored === f.D ||
          (stored !== null && f.D !== null && Math.abs(stored - f.D) <= 1e-9 * Math.abs(stored));
      } else {
        extra.deltaD = f.D !== null && baseD !== null ? f.D - baseD : null;
        extra.relativeDelta = f.D !== null && baseD !== null && baseD !== 0 ? (f.D - baseD) / baseD : null;
      }
      push("sensitivity", c.name, {
        value: f.D,
        lower: ci.lower,
        upper: ci.upper,
        detail: {
          ...detailBase,
          status: f.status,
          reason: f.reason,
          window: f.window,
          interval: ci.method,
          ...extra,
        },
      });
      out.push({ name: c.name, D: f.D, status: f.status });
    }
    return { status: "ok", reason: null, rows: out };
  } catch (e) {
    return none("error", errorText(e));
  }
}
