/**
 * Stored frames as SQL rows, for `spindrift query`: positions without decoding BLOBs by hand.
 *
 * Frames are stored as one BLOB per frame (store/frame_codec.ts). On the connection `spindrift query` opens, this
 * module registers a function and a temporary view (nothing is written to the database file):
 *
 * - `frame_points` (view): one row per object per stored frame of the realisations of the latest study revision's
 *   master seed (a point may also hold realisations of an earlier seed), with columns `realisation_id`, `point_hash`,
 *   `point` and `point_label` (the parameter point's index and label in the latest study revision), `idx`
 *   (realisation index within the point), `k` and `t` (frame index and time), `i` (position of the object in
 *   the frame), `id`, `x`, `y`, `z` (NULL in 2D), `circulation` (2D, in κ), `loop`, `marker` (3D), `label`
 *   (`main`, `evaporated`, `stray`).
 * - `frame_json(layout, data, n)` (function): a frame's objects as a JSON array of
 *   `[id, x, y, z, circulation, loop, marker, label]` arrays (null where the frame has no such column), for use
 *   with SQLite's `json_each` (e.g. on `pending_frames`, frames of a realisation still running).
 *
 * Values are exact: each double is written as its shortest round-trip decimal and SQLite reads it back to the
 * same bits (tested). Filter on `realisation_id`, `point`/`idx` or `k` first: SQLite then decodes only the
 * frames it needs.
 *
 * @example
 * ```sql
 * SELECT t, AVG(x*x + y*y) AS r2 FROM frame_points
 *  WHERE point = 1 AND idx = 3 AND label = 'main' GROUP BY k ORDER BY k;
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import { decodeFrame } from "../store/frame_codec.ts";
import { LABEL_NAMES } from "../engines/observables/labels.ts";

const FIELDS = ["id", "x", "y", "z", "circulation", "loop", "marker", "label"] as const;

/** A frame's objects as JSON rows `[id, x, y, z, circulation, loop, marker, label]` (see the module comment). */
export function frameJson(layout: string, data: Uint8Array, n: number): string {
  const c = decodeFrame(layout, data, n);
  const cols = FIELDS.map((f) => c[f] ?? null);
  const labels = c.label ?? null;
  const rows: string[] = new Array(n);
  for (let i = 0; i < n; i++) {
    const cells = cols.map((col, j) =>
      col === null
        ? "null"
        : j === 7
        ? JSON.stringify(LABEL_NAMES[labels![i]] ?? String(labels![i]))
        : json(col[i])
    );
    rows[i] = `[${cells.join(",")}]`;
  }
  return `[${rows.join(",")}]`;
}

/** A number as JSON: shortest round-trip decimal; NaN and ±∞ (not JSON) as null. */
function json(v: number): string {
  return Number.isFinite(v) ? String(v) : "null";
}

const VIEW = `CREATE TEMP VIEW IF NOT EXISTS frame_points AS
SELECT f.realisation_id AS realisation_id, r.point_hash AS point_hash,
       sp.point_index AS point, sp.label AS point_label, r.idx AS idx, f.k AS k, f.t AS t, j.key AS i,
       j.value ->> 0 AS id, j.value ->> 1 AS x, j.value ->> 2 AS y, j.value ->> 3 AS z,
       j.value ->> 4 AS circulation, j.value ->> 5 AS loop, j.value ->> 6 AS marker, j.value ->> 7 AS label
  FROM frames f
  JOIN realisations r ON r.id = f.realisation_id
  LEFT JOIN study_points sp ON sp.point_hash = r.point_hash AND sp.study_id = (SELECT MAX(id) FROM studies)
  CROSS JOIN json_each(frame_json(f.layout, f.data, f.n)) j
  WHERE r.master_seed IS NULL
     OR r.master_seed = (SELECT CAST(json_extract(normalized_json, '$.seed') AS TEXT) FROM studies
                          ORDER BY id DESC LIMIT 1)`;

/** Registers `frame_json` and the `frame_points` view on `db` (works on read-only connections). */
export function registerFrameViews(db: DatabaseSync): void {
  db.function("frame_json", { deterministic: true }, (layout, data, n) => {
    if (typeof layout !== "string" || !(data instanceof Uint8Array)) return null;
    return frameJson(layout, data, Number(n));
  });
  // A read-only folder's database is an in-memory copy with query_only on, which also refuses temporary views:
  // lift it for this one statement (the copy is never written back).
  const queryOnly = Number(
    (db.prepare("PRAGMA query_only").get() as { query_only?: number })?.query_only ?? 0,
  );
  if (queryOnly) db.exec("PRAGMA query_only = OFF");
  try {
    db.exec(VIEW);
  } finally {
    if (queryOnly) db.exec("PRAGMA query_only = ON");
  }
}
