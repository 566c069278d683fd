/** Test helpers for the store: a study record, a realistic study database and the damage a failing disk does. */
import { type PointRecord, type StudyRecord, StudyStore } from "./db.ts";
import { encodeFrame } from "./frame_codec.ts";

/** Records a one-point study (fields not given are placeholders); returns the study id. */
export function recordOnePointStudy(
  store: StudyStore,
  study: Partial<StudyRecord> = {},
  point: Partial<PointRecord> = {},
): number {
  return store.recordStudy({
    name: "toy",
    description: "",
    studyHash: "h",
    sourcePath: null,
    text: "",
    normalizedJson: "{}",
    engineId: "e",
    engineVersion: "1",
    toolVersion: "test",
    denoVersion: Deno.version.deno,
    gitCommit: null,
    ...study,
  }, [{
    pointIndex: 0,
    pointHash: "p",
    paramsHash: "q",
    label: "base",
    variedJson: "{}",
    paramsJson: "{}",
    controlsJson: "{}",
    ...point,
  }]);
}

/** A study database with `n` realisations of 20 frames of 200 objects each (a few MB, many pages). */
export function writeStudyDb(path: string, n: number): void {
  const store = StudyStore.open(path);
  try {
    recordOnePointStudy(store, {
      name: "door",
      text: "name: door",
      normalizedJson: '{"realisations":40,"seed":"1"}',
    });
    const x = new Float64Array(200).map((_, i) => Math.sin(i));
    for (let i = 0; i < n; i++) {
      const id = store.beginRealisation({
        key: `k${i}`,
        pointHash: "p",
        index: i,
        masterSeed: "1",
        seedHex: "0",
        engineId: "e",
        engineVersion: "1",
        host: "h",
      });
      const enc = encodeFrame(200, { x: x.map((v) => v + i), y: x });
      store.appendFrames(
        id,
        Array.from({ length: 20 }, (_, k) => ({ k, t: k, n: 200, layout: enc.layout, data: enc.data })),
      );
      const t = Array.from({ length: 20 }, (_, k) => k);
      store.finishRealisation(id, {
        status: "done",
        wallSeconds: 1,
        simTimeReached: 19,
        scalars: { steps: i },
        series: { msd: { t, v: t }, cluster_rms_radius: { t, v: t } },
        events: [],
      });
    }
  } finally {
    store.close();
  }
}

/**
 * Overwrites the 4 KiB page at `fraction` of the file with seeded random bytes, as a failing disk or an
 * interrupted copy would; returns the byte offset.
 */
export function damagePage(path: string, fraction: number, seed = 12345): number {
  const size = Deno.statSync(path).size;
  const page = 4096;
  const at = Math.floor((size * fraction) / page) * page;
  const noise = new Uint8Array(page);
  let s = seed;
  for (let i = 0; i < page; i++) noise[i] = (s = (Math.imul(s, 1103515245) + 12345) >>> 0) >>> 24;
  const f = Deno.openSync(path, { write: true });
  try {
    f.seekSync(at, Deno.SeekMode.Start);
    f.writeSync(noise);
  } finally {
    f.close();
  }
  return at;
}
