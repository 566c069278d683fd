import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals } from "../test/_assert.ts";
import { normalizeText, runForTest } from "../test/_study.ts";
import { decodeFrame, encodeFrame } from "../store/frame_codec.ts";
import { LABEL_NAMES } from "../engines/observables/labels.ts";
import { registerFrameViews } from "./frame_sql.ts";
import { runQuery } from "./query.ts";
import { tempDir } from "../test/_tmp.ts";

const PV = `
name: sql-2d
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 10, radius: 1.0 }
  annihilationDistance: 0.01
sweep:
  grid: { initial.count: [8, 10] }
realisations: 2
seed: 11
run: { duration: 0.3, sampleInterval: 0.1 }
`;

const RING = `
name: sql-3d
engine: vortex-filament-3d
parameters:
  units: dimensionless
  coreRadius: 1.0e-3
  resolution: 0.2
  initial: { kind: ring, radius: 1.0 }
realisations: 1
seed: 1
run: { duration: 0.02, sampleInterval: 0.01 }
`;

const fixture = (async () => {
  const dir = tempDir("spindrift-frame-sql-");
  const pv = `${dir}/sql-2d.sqlite`, ring = `${dir}/sql-3d.sqlite`;
  await runForTest(normalizeText(PV), pv, 2);
  await runForTest(normalizeText(RING), ring, 1);
  return { pv, ring };
})();

type Row = Record<string, number | string | null>;

/** Rows of frame_points for one frame, and the decoded BLOB of that frame. */
function frameBoth(dbPath: string, point: number, idx: number, k: number) {
  const db = new DatabaseSync(dbPath, { readOnly: true });
  try {
    registerFrameViews(db);
    const rows = db.prepare(
      "SELECT * FROM frame_points WHERE point = ? AND idx = ? AND k = ? ORDER BY i",
    ).all(point, idx, k) as Row[];
    const f = db.prepare(
      `SELECT f.layout, f.data, f.n FROM frames f JOIN realisations r ON r.id = f.realisation_id
         JOIN study_points sp ON sp.point_hash = r.point_hash WHERE sp.point_index = ? AND r.idx = ? AND f.k = ?`,
    ).get(point, idx, k) as { layout: string; data: Uint8Array; n: number };
    return { rows, columns: decodeFrame(f.layout, f.data, f.n), n: f.n };
  } finally {
    db.close();
  }
}

Deno.test("frame_points: 2D rows are the stored frame, number for number", async () => {
  const { pv } = await fixture;
  const { rows, columns, n } = frameBoth(pv, 1, 1, 2);
  assertEquals(rows.length, n);
  for (let i = 0; i < n; i++) {
    const r = rows[i];
    assertEquals([r.point, r.point_label, r.idx, r.k, r.i], [1, "initial.count=10", 1, 2, i]);
    assert(Object.is(r.x, (columns.x as Float64Array)[i]) && Object.is(r.y, (columns.y as Float64Array)[i]));
    assertEquals(r.id, (columns.id as Int32Array)[i]);
    assertEquals(r.circulation, (columns.circulation as Float64Array)[i]);
    assertEquals(r.label, LABEL_NAMES[(columns.label as Uint8Array)[i]]);
    assertEquals([r.z, r.loop, r.marker], [null, null, null]);
  }
});

Deno.test("frame_points: 3D rows carry z, loop and marker", async () => {
  const { ring } = await fixture;
  const { rows, columns, n } = frameBoth(ring, 0, 0, 1);
  assertEquals(rows.length, n);
  assert(n >= 30, `a ring of radius 1 at spacing ≤ 0.2 has ≥ 2π/0.2 ≈ 31 points, got ${n}`);
  for (let i = 0; i < n; i++) {
    assert(Object.is(rows[i].z, (columns.z as Float64Array)[i]), "z exact");
    assertEquals(rows[i].loop, (columns.loop as Int32Array)[i]);
    assertEquals(rows[i].marker, (columns.marker as Uint8Array)[i]);
    assertEquals(rows[i].circulation, null);
  }
  assert(rows.some((r) => r.marker === 1), "markers present");
});

Deno.test("spindrift query: frame_points works on the read-only connection, over all frames", async () => {
  const { pv } = await fixture;
  const all = JSON.parse(await runQuery(pv, "SELECT COUNT(*) AS rows FROM frame_points", "json"));
  const stored = JSON.parse(await runQuery(pv, "SELECT SUM(n) AS rows FROM frames", "json"));
  assertEquals(all, stored);
  const r2 = JSON.parse(
    await runQuery(
      pv,
      "SELECT k, AVG(x*x + y*y) AS r2 FROM frame_points WHERE point = 0 AND idx = 0 GROUP BY k ORDER BY k",
      "json",
    ),
  ) as { k: number; r2: number }[];
  assertEquals(r2.map((r) => r.k), [0, 1, 2, 3]);
  assert(r2.every((r) => r.r2 > 0 && r.r2 < 1), JSON.stringify(r2));
});

Deno.test("frame_json: doubles survive SQLite's JSON reader bit for bit, NaN becomes NULL", () => {
  // Shortest round-trip decimals (ECMA-262 Number::toString) read by SQLite's JSON parser: checked here on
  // awkward values (subnormals, the largest double, values near powers of ten).
  const x = new Float64Array([0.1, -2.5e-7, 5e-324, 1.7976931348623157e308, 123456789.12345679, 1 / 3, NaN]);
  const n = x.length;
  const frame = encodeFrame(n, {
    id: new Int32Array(n).map((_, i) => i),
    x,
    y: new Float64Array(n).fill(-0.5),
    label: new Uint8Array(n),
  });
  const db = new DatabaseSync(":memory:");
  registerFrameViews(db);
  const rows = db.prepare("SELECT j.value ->> 1 AS x FROM json_each(frame_json(?, ?, ?)) j").all(
    frame.layout,
    frame.data,
    n,
  ) as { x: number | null }[];
  db.close();
  for (let i = 0; i < n - 1; i++) assert(Object.is(rows[i].x, x[i]), `${x[i]} came back as ${rows[i].x}`);
  assertEquals(rows[n - 1].x, null);
});
