/**
 * Object tracks of a parameter point read back from the stored frames, as the loss-aware diffusion
 * estimators take them (`estimators/tracks.ts`), optionally with the main-cluster labels of other
 * classifications (frames replayed through the classifier with varied thresholds, docs/methods.md §4).
 *
 * - Objects: 2D vortices (by id); 3D filaments: the Lagrangian markers only (points with `marker = 1`, the
 *   material points of docs/methods.md §2.10), grouped by their loop (markers of one loop do not move independently).
 * - Frames: realisations are aligned by frame index k; the time of k is its lag since the realisation's first
 *   frame (the time origin t₀). A realisation without frame k has every object absent there.
 * - Main cluster: the stored `label` column (0 = main); frames without labels count every object as main.
 *
 * One pass over the frames of each realisation; memory O(frames × objects) per realisation.
 */
import type { DatabaseSync } from "node:sqlite";
import type { EngineCapabilities, Frame, RunControls } from "../../engines/contract.ts";
import type { ClassificationConfig } from "../../engines/observables/contract.ts";
import { createClassifier, Label } from "../../engines/observables/mod.ts";
import { frameArrays, iterateFrames } from "../../store/frames.ts";
import type { RealisationTracks, TrackEnsemble } from "../estimators/tracks.ts";

/** What the replay needs to classify frames again. */
export interface ReplayContext {
  readonly capabilities: EngineCapabilities;
  readonly controls: RunControls;
  readonly coreRadius?: number;
}

export interface StoredTracks {
  /** Tracks with the stored labels. */
  readonly ensemble: TrackEnsemble;
  /** Per replayed classification, per realisation: main flags in the tracks' layout (k·M + j). */
  readonly replayed: readonly (readonly Uint8Array[])[];
  /** Frame index of each common frame. */
  readonly frames: Int32Array;
  /** Time of the first stored frame (the time origin t₀ of the lags), NaN without frames. */
  readonly timeOrigin: number;
}

interface FrameRecord {
  readonly k: number;
  readonly ids: Int32Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array | null;
  readonly main: Uint8Array;
  readonly loop: Int32Array | null;
  readonly replayed: Uint8Array[];
}

/**
 * Reads the tracks of realisations `ids` (and replays `configs` when given; the replay needs the engine's
 * capabilities).
 */
export function readStoredTracks(
  db: DatabaseSync,
  ids: readonly number[],
  opts: {
    readonly dimension: 2 | 3;
    readonly replay?: { readonly context: ReplayContext; readonly configs: readonly ClassificationConfig[] };
  },
): StoredTracks {
  const configs = opts.replay?.configs ?? [];
  const perReal: FrameRecord[][] = [];
  const tByK = new Map<number, number>();
  let timeOrigin = Number.NaN;
  for (const id of ids) {
    const classifiers = opts.replay
      ? configs.map((classification) => createClassifier({ ...opts.replay!.context, classification }))
      : [];
    const frames: FrameRecord[] = [];
    let t0 = Number.NaN;
    for (const f of iterateFrames(db, id)) {
      if (Number.isNaN(t0)) t0 = f.t;
      if (Number.isNaN(timeOrigin)) timeOrigin = f.t;
      if (!tByK.has(f.k)) tByK.set(f.k, f.t - t0);
      const a = frameArrays(f);
      const replayed = classifiers.map((c) => {
        const { label: _label, ...arrays } = a;
        const frame: Frame = { index: f.k, t: f.t, n: f.n, ...arrays, diagnostics: {} };
        return c.classify(frame).labels;
      });
      // Objects: markers only when the frame has a marker column (filament points).
      const sel: number[] = [];
      for (let i = 0; i < f.n; i++) if (a.marker === null || a.marker[i] === 1) sel.push(i);
      const pick = <T extends Float64Array | Int32Array | Uint8Array>(src: T, make: (n: number) => T): T => {
        const out = make(sel.length);
        sel.forEach((i, q) => (out[q] = src[i]));
        return out;
      };
      const main = new Uint8Array(sel.length);
      sel.forEach((i, q) => (main[q] = a.label === null || a.label[i] === Label.Main ? 1 : 0));
      frames.push({
        k: f.k,
        ids: pick(a.id, (n) => new Int32Array(n)),
        x: pick(a.x, (n) => new Float64Array(n)),
        y: pick(a.y, (n) => new Float64Array(n)),
        z: a.z ? pick(a.z, (n) => new Float64Array(n)) : null,
        main,
        loop: a.marker !== null && a.loop !== null ? pick(a.loop, (n) => new Int32Array(n)) : null,
        replayed: replayed.map((labels) => {
          const m = new Uint8Array(sel.length);
          sel.forEach((i, q) => (m[q] = labels[i] === Label.Main ? 1 : 0));
          return m;
        }),
      });
    }
    perReal.push(frames);
  }
  const allK = [...tByK.keys()].sort((a, b) => a - b);
  const col = new Map<number, number>();
  allK.forEach((k, j) => col.set(k, j));
  const K = allK.length;
  const t = Float64Array.from(allK, (k) => tByK.get(k)!);
  const realisations: RealisationTracks[] = [];
  const replayed: Uint8Array[][] = configs.map(() => []);
  for (const frames of perReal) {
    const slot = new Map<number, number>();
    for (const f of frames) for (const id of f.ids) if (!slot.has(id)) slot.set(id, slot.size);
    const M = slot.size;
    const x = new Float64Array(K * M).fill(Number.NaN);
    const y = new Float64Array(K * M).fill(Number.NaN);
    const z = opts.dimension === 3 ? new Float64Array(K * M).fill(Number.NaN) : null;
    const main = new Uint8Array(K * M);
    const grouped = frames.some((f) => f.loop !== null);
    const group = grouped ? new Int32Array(K * M).fill(-1) : null;
    const rep = configs.map(() => new Uint8Array(K * M));
    for (const f of frames) {
      const k = col.get(f.k)!;
      for (let q = 0; q < f.ids.length; q++) {
        const o = k * M + slot.get(f.ids[q])!;
        x[o] = f.x[q];
        y[o] = f.y[q];
        if (z) z[o] = f.z ? f.z[q] : 0;
        main[o] = f.main[q];
        if (group && f.loop) group[o] = f.loop[q];
        for (let c = 0; c < configs.length; c++) rep[c][o] = f.replayed[c][q];
      }
    }
    realisations.push({ objects: M, x, y, z, main, group });
    rep.forEach((r, c) => replayed[c].push(r));
  }
  return {
    ensemble: { dimension: opts.dimension, t, realisations },
    replayed,
    frames: Int32Array.from(allK),
    timeOrigin,
  };
}
