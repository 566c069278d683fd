import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals } from "../test/_assert.ts";
import { StudyStore } from "../store/db.ts";
import { encodeFrame } from "../store/frame_codec.ts";
import { buildFieldSnapshotSection } from "./field_snapshots_section.ts";
import { tempFile } from "../test/_tmp.ts";

function database(withSnapshots: boolean): string {
  const path = tempFile(".sqlite");
  const store = StudyStore.open(path);
  store.recordStudy({
    name: "gp",
    description: "",
    studyHash: "ab".repeat(32),
    sourcePath: null,
    text: "",
    normalizedJson: "{}",
    engineId: "gross-pitaevskii-2d",
    engineVersion: "1.0.0",
    toolVersion: "t",
    denoVersion: "t",
    gitCommit: null,
  }, [{
    pointIndex: 0,
    pointHash: "cd".repeat(32),
    paramsHash: "x",
    label: "base <b>",
    variedJson: "{}",
    paramsJson: "{}",
    controlsJson: "{}",
  }]);
  const id = store.beginRealisation({
    key: "k",
    pointHash: "cd".repeat(32),
    index: 0,
    seedHex: "0",
    masterSeed: "1",
    engineId: "gross-pitaevskii-2d",
    engineVersion: "1.0.0",
    host: "h",
  });
  const frame = (k: number) => {
    const e = encodeFrame(2, {
      id: Int32Array.of(0, 1),
      x: Float64Array.of(-1, 1.5),
      y: Float64Array.of(0, 0.5),
      circulation: Float64Array.of(1, -1),
    });
    return { k, t: k, n: 2, layout: e.layout, data: e.data };
  };
  store.appendFrames(id, [frame(0), frame(1), frame(2)]);
  const image = (k: number) => ({
    frameIndex: k,
    t: k,
    nx: 4,
    ny: 4,
    x0: -4,
    y0: -4,
    dx: 2,
    dy: 2,
    fields: { density: new Float32Array(16).fill(1), phase: new Float32Array(16).fill(0.5) },
  });
  store.finishRealisation(id, {
    status: "done",
    wallSeconds: 1,
    simTimeReached: 2,
    scalars: {},
    series: {},
    events: [],
    snapshots: withSnapshots ? [image(0), image(1), image(2)] : [],
  });
  store.close();
  return path;
}

Deno.test("buildFieldSnapshotSection shows density and phase of the first and last frame with vortex markers", () => {
  const db = new DatabaseSync(database(true), { readOnly: true });
  try {
    const html = buildFieldSnapshotSection(db, 1, "ξ");
    assertEquals(html.match(/data:image\/png;base64,/g)?.length, 4, "two frames × density and phase");
    assert(html.includes("t = 0 (frame 0)") && html.includes("t = 2 (frame 2)"), "first and last frame");
    assert(!html.includes("(frame 1)"), "intermediate frames are not shown");
    assertEquals(html.match(/<circle /g)?.length, 8, "two vortices on each of four panels");
    assert(html.includes('fill="#e8262b"') && html.includes('fill="none"'), "both signs drawn");
    assert(html.includes("base &lt;b&gt;"), "point label escaped");
    assert(!html.includes("<script"), "no script");
  } finally {
    db.close();
  }
});

Deno.test("buildFieldSnapshotSection is empty without snapshots", () => {
  const db = new DatabaseSync(database(false), { readOnly: true });
  try {
    assertEquals(buildFieldSnapshotSection(db, 1), "");
  } finally {
    db.close();
  }
});
