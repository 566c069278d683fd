import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals } from "../test/_assert.ts";
import { StudyStore } from "./db.ts";
import { mergeShard } from "./merge.ts";
import { firstRealisationWithSnapshots, hasTable, readFieldSnapshots } from "./snapshots.ts";
import { tempDir, tempFile } from "../test/_tmp.ts";

const STUDY_HASH = "ab".repeat(32);
const POINT = "cd".repeat(32);
const ENGINE = { engineId: "toy-field-2d", engineVersion: "1.0.0" };

/** A study database with one done realisation carrying two frames × two field images. */
function writeDb(path: string, withSnapshots = true): void {
  const store = StudyStore.open(path);
  try {
    store.recordStudy({
      name: "field",
      description: "field images",
      studyHash: STUDY_HASH,
      sourcePath: null,
      text: "name: field",
      normalizedJson: "{}",
      ...ENGINE,
      toolVersion: "test",
      denoVersion: "test",
      gitCommit: null,
    }, [{
      pointIndex: 0,
      pointHash: POINT,
      paramsHash: POINT,
      label: "base",
      variedJson: "{}",
      paramsJson: "{}",
      controlsJson: "{}",
    }]);
    const id = store.beginRealisation({
      key: "ee".repeat(32),
      pointHash: POINT,
      index: 0,
      seedHex: "00",
      masterSeed: "1",
      ...ENGINE,
      host: "h",
    });
    const image = (k: number) => ({
      frameIndex: k,
      t: 0.5 * k,
      nx: 3,
      ny: 2,
      x0: -1.5,
      y0: -1,
      dx: 1,
      dy: 1,
      fields: {
        density: Float32Array.of(1, 0.5, 0.25, 1 / 3, Math.PI, k),
        phase: Float32Array.of(-Math.PI, 0, Math.PI, 1e-8, -2, k),
      },
    });
    store.finishRealisation(id, {
      status: "done",
      wallSeconds: 1,
      simTimeReached: 1,
      scalars: {},
      series: {},
      events: [],
      snapshots: withSnapshots ? [image(0), image(2)] : [],
    });
  } finally {
    store.close();
  }
}

Deno.test("field snapshots are stored with the realisation and read back exactly (float32)", () => {
  const path = tempFile(".sqlite");
  writeDb(path);
  const db = new DatabaseSync(path, { readOnly: true });
  try {
    const first = firstRealisationWithSnapshots(db, 1)!;
    assertEquals(first.pointLabel, "base");
    const rows = readFieldSnapshots(db, first.realisationId);
    assertEquals(rows.map((r) => `${r.k}/${r.name}`), ["0/density", "0/phase", "2/density", "2/phase"]);
    assertEquals(Array.from(rows[2].values), Array.from(Float32Array.of(1, 0.5, 0.25, 1 / 3, Math.PI, 2)));
    assertEquals([rows[1].nx, rows[1].ny, rows[1].x0, rows[1].dy, rows[3].t], [3, 2, -1.5, 1, 1]);
  } finally {
    db.close();
  }
});

Deno.test("field snapshots: a database without the table reads as empty", () => {
  const path = tempFile(".sqlite");
  writeDb(path, false);
  const raw = new DatabaseSync(path);
  raw.exec("DROP TABLE field_snapshots");
  assert(!hasTable(raw));
  assertEquals(readFieldSnapshots(raw, 1), []);
  assertEquals(firstRealisationWithSnapshots(raw, 1), null);
  raw.close();
});

Deno.test("mergeShard copies field snapshots with their realisation", async () => {
  const dir = tempDir();
  const shard = `${dir}/shard.sqlite`, main = `${dir}/main.sqlite`;
  writeDb(shard);
  const store = StudyStore.open(main);
  try {
    await mergeShard(store, shard, { studyHash: STUDY_HASH, ...ENGINE });
  } finally {
    store.close();
  }
  const a = new DatabaseSync(shard, { readOnly: true }), b = new DatabaseSync(main, { readOnly: true });
  try {
    const fa = readFieldSnapshots(a, 1),
      fb = readFieldSnapshots(b, firstRealisationWithSnapshots(b, 1)!.realisationId);
    assertEquals(fb.length, 4);
    assertEquals(fb.map((r) => Array.from(r.values)), fa.map((r) => Array.from(r.values)));
  } finally {
    a.close();
    b.close();
  }
});
