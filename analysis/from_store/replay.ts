/**
 * Replays stored frames through the classifier and the `msd` observable with other classification
 * thresholds, to rebuild the MSD ensemble without rerunning any engine (threshold sensitivity, methods §4).
 *
 * Each stored frame is decoded once and pushed through one classifier + MSD accumulator per configuration,
 * so memory stays O(configurations × objects) whatever the run length. Besides `msd` and `msd_count` the
 * replay records, per frame, the main-cluster RMS radius and the number of main-labelled objects exactly as
 * the `cluster` observable defines them (the classifier's R_rms; objects labelled main).
 */
import type { EngineCapabilities, Frame, RunControls } from "../../engines/contract.ts";
import type { ClassificationConfig } from "../../engines/observables/contract.ts";
import { createClassifier, Label, msdObservable } from "../../engines/observables/mod.ts";
import type { MsdEnsembleInput } from "../estimators/msd_fit.ts";
import type { DatabaseSync } from "node:sqlite";
import { frameArrays, iterateFrames } from "../../store/frames.ts";

export interface ReplayContext {
  readonly capabilities: EngineCapabilities;
  readonly controls: RunControls;
  readonly coreRadius?: number;
}

interface Track {
  t: number[];
  msd: number[];
  count: number[];
  rms: number[];
  main: number[];
}

/**
 * MSD ensembles (one per configuration) rebuilt from the stored frames of `realisationIds`. Times are lags
 * since each realisation's first frame; realisations are aligned by frame index (missing frames are NaN with
 * count 0).
 */
export function replayMsdEnsembles(
  db: DatabaseSync,
  realisationIds: readonly number[],
  ctx: ReplayContext,
  configs: readonly ClassificationConfig[],
): MsdEnsembleInput[] {
  const perConfig: Track[][] = configs.map(() => []);
  const ks: number[][] = [];
  const tByK = new Map<number, number>();
  for (const id of realisationIds) {
    const pipes = configs.map((classification) => {
      const octx = { ...ctx, classification };
      return { classifier: createClassifier(octx), msd: msdObservable.create(octx) };
    });
    const tracks: Track[] = configs.map(() => ({ t: [], msd: [], count: [], rms: [], main: [] }));
    const kList: number[] = [];
    let t0 = Number.NaN;
    for (const f of iterateFrames(db, id)) {
      if (Number.isNaN(t0)) t0 = f.t;
      const lag = f.t - t0;
      kList.push(f.k);
      if (!tByK.has(f.k)) tByK.set(f.k, lag);
      const { label: _label, ...arrays } = frameArrays(f);
      const frame: Frame = { index: f.k, t: f.t, n: f.n, ...arrays, diagnostics: {} };
      for (let q = 0; q < pipes.length; q++) {
        const cls = pipes[q].classifier.classify(frame);
        pipes[q].msd.push(frame, cls);
        let main = 0;
        for (let i = 0; i < f.n; i++) if (cls.labels[i] === Label.Main) main++;
        tracks[q].rms.push(cls.rmsRadius);
        tracks[q].main.push(main);
      }
    }
    for (let q = 0; q < pipes.length; q++) {
      const res = pipes[q].msd.finish();
      tracks[q].msd = [...res.series.msd.v];
      tracks[q].count = [...res.series.msd_count.v];
      perConfig[q].push(tracks[q]);
    }
    ks.push(kList);
  }
  const allK = [...tByK.keys()].sort((a, b) => a - b);
  const col = new Map<number, number>();
  allK.forEach((k, j) => col.set(k, j));
  const t = Float64Array.from(allK, (k) => tByK.get(k)!);
  const K = allK.length;
  return perConfig.map((tracks) => {
    const msd: Float64Array[] = [];
    const counts: Float64Array[] = [];
    const rmsRadius: Float64Array[] = [];
    const mainCount: Float64Array[] = [];
    tracks.forEach((tr, i) => {
      const m = new Float64Array(K).fill(Number.NaN);
      const c = new Float64Array(K);
      const r = new Float64Array(K).fill(Number.NaN);
      const n = new Float64Array(K);
      ks[i].forEach((k, q) => {
        const j = col.get(k)!;
        m[j] = tr.msd[q];
        c[j] = Number.isFinite(tr.count[q]) ? tr.count[q] : 0;
        r[j] = tr.rms[q];
        n[j] = tr.main[q];
      });
      msd.push(m);
      counts.push(c);
      rmsRadius.push(r);
      mainCount.push(n);
    });
    return { t, msd, counts, rmsRadius, mainCount };
  });
}
