import { DatabaseSync } from "node:sqlite";
import { assert, assertEquals } from "../test/_assert.ts";
import { normalizeText, runForTest } from "../test/_study.ts";
import { decodeFrame } from "../store/frame_codec.ts";
import { LABEL_NAMES } from "../engines/observables/labels.ts";
import { exportProvenance, exportRealisation, type ExportSelection } from "./export.ts";
import { UserError } from "./errors.ts";
import { tempDir } from "../test/_tmp.ts";

const STUDY = `
name: export-small
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 12, radius: 1.0 }
  annihilationDistance: 0.01
sweep:
  grid:
    initial.count: [8, 12]
realisations: 3
seed: 5
run: { duration: 0.3, sampleInterval: 0.1 }
`;

/** A two-point study database (built once per test file). */
const fixture = (async () => {
  const dir = tempDir("spindrift-export-");
  const dbPath = `${dir}/export-small.sqlite`;
  await runForTest(normalizeText(STUDY), dbPath, 2);
  return dbPath;
})();

async function exportText(dbPath: string, sel: ExportSelection, format: "csv" | "jsonl" = "csv") {
  const chunks: Uint8Array[] = [];
  const res = await exportRealisation(dbPath, sel, format, {
    write: (c) => Promise.resolve(void chunks.push(c.slice())),
  });
  return { res, text: new TextDecoder().decode(new Uint8Array(chunks.flatMap((c) => [...c]))) };
}

/** The stored frames of realisation `idx` of point `pointIndex`, straight from SQL. */
function storedFrames(dbPath: string, pointIndex: number, idx: number) {
  const db = new DatabaseSync(dbPath, { readOnly: true });
  try {
    return db.prepare(
      `SELECT f.t, f.n, f.layout, f.data, r.id FROM frames f JOIN realisations r ON r.id = f.realisation_id
         JOIN study_points sp ON sp.point_hash = r.point_hash
        WHERE sp.point_index = ? AND r.idx = ? ORDER BY f.k`,
    ).all(pointIndex, idx) as { t: number; n: number; layout: string; data: Uint8Array; id: number }[];
  } finally {
    db.close();
  }
}

Deno.test("exportRealisation: --point/--index select the realisation status and the report call by those numbers", async () => {
  const dbPath = await fixture;
  const { res, text } = await exportText(dbPath, { point: "1", index: 2 });
  const stored = storedFrames(dbPath, 1, 2);
  assertEquals(res.target.index, 2);
  assertEquals(res.target.point?.label, "initial.count=12");
  assertEquals(res.target.id, stored[0].id);
  const lines = text.trimEnd().split("\n");
  // No comment line: the first line is the header, as spreadsheet and data-frame readers expect.
  assertEquals(lines[0], "t,id,x,y,circulation,label");
  // Round trip: every exported number reads back to the stored double, bit for bit (shortest round-trip
  // decimals, ECMA-262 Number::toString), in frame order and object order.
  let row = 1;
  for (const f of stored) {
    const c = decodeFrame(f.layout, f.data, f.n);
    for (let i = 0; i < f.n; i++, row++) {
      const [t, id, x, y, g, label] = lines[row].split(",");
      assert(Object.is(Number(t), f.t) && Number(id) === (c.id as Int32Array)[i], lines[row]);
      assert(
        Object.is(Number(x), (c.x as Float64Array)[i]) && Object.is(Number(y), (c.y as Float64Array)[i]),
      );
      assert(Object.is(Number(g), (c.circulation as Float64Array)[i]));
      assertEquals(label, LABEL_NAMES[(c.label as Uint8Array)[i]]);
    }
  }
  assertEquals(row, lines.length, "one row per stored object per frame, nothing else");
  assertEquals(res.rows, lines.length - 1);
  assertEquals(res.frames, stored.length);
});

Deno.test("exportRealisation: a point by label, or the database id, selects the same rows", async () => {
  const dbPath = await fixture;
  const byIndex = await exportText(dbPath, { point: "0", index: 1 });
  const byLabel = await exportText(dbPath, { point: "initial.count=8", index: 1 });
  const byId = await exportText(dbPath, { id: byIndex.res.target.id });
  assertEquals(byLabel.text, byIndex.text);
  assertEquals(byId.text, byIndex.text);
  const jsonl = await exportText(dbPath, { point: "0", index: 1 }, "jsonl");
  assertEquals(jsonl.res.rows, byIndex.res.rows);
  assertEquals(JSON.parse(jsonl.text.split("\n")[0]).label, byIndex.text.split("\n")[1].split(",")[5]);
  const prov = exportProvenance(dbPath, byIndex.res, "csv") as {
    point: { index: number; label: string };
    realisation: { index: number; id: number; seed: string };
  };
  assertEquals(prov.point.index, 0);
  assertEquals(prov.point.label, "initial.count=8");
  assertEquals(prov.realisation.index, 1);
  assert(/^[0-9a-f]{32}$/.test(prov.realisation.seed), prov.realisation.seed);
});

Deno.test("exportRealisation: a missing or ambiguous selection says what exists", async () => {
  const dbPath = await fixture;
  const refused = async (sel: ExportSelection, pattern: RegExp) => {
    let error: unknown;
    try {
      await exportText(dbPath, sel);
    } catch (e) {
      error = e;
    }
    assert(error instanceof UserError, String(error));
    assert(pattern.test(`${error.message} | ${error.hint}`), `${error.message} | ${error.hint}`);
  };
  await refused({ index: 0 }, /say which parameter point.*0 initial\.count=8, 1 initial\.count=12/);
  await refused({ point: "1" }, /add --index.*indices 0–2/);
  await refused({ point: "1", index: 7 }, /realisation 7 of point 1 \(initial\.count=12\) is not stored/);
  await refused({ point: "initial.count=9", index: 0 }, /no parameter point 'initial\.count=9'/);
  await refused({ id: 999 }, /no realisation with database id 999/);
  await refused({ id: 1, index: 0 }, /--id selects a realisation by itself/);
});
