/**
 * Field snapshots in the store: downsampled images of an engine's field (e.g. the Gross–Pitaevskii density and
 * phase) at stored frames, table `field_snapshots` (store/schema.ts). Written in the realisation's final
 * transaction (`StudyStore.finishRealisation`), copied by shard merges, read by the report.
 *
 * BLOB layout: nx·ny IEEE-754 float32 values, little-endian, row-major (value (i, j) at index j·nx + i), cells
 * centred at (x0 + (i + ½)dx, y0 + (j + ½)dy) in the engine's length unit.
 *
 * @example
 * ```ts
 * const rows = readFieldSnapshots(db, realisationId); // [{ k: 0, name: "density", values: Float32Array, … }]
 * ```
 */
import type { DatabaseSync } from "node:sqlite";

/** Time and pixel grid of a field image (cells centred at (x0 + (i + ½)dx, y0 + (j + ½)dy)). */
export interface FieldImageGrid {
  readonly t: number;
  readonly nx: number;
  readonly ny: number;
  readonly x0: number;
  readonly y0: number;
  readonly dx: number;
  readonly dy: number;
}

/** The field images of one frame, as written (the store's view of the engine contract's FieldSnapshot). */
export interface FieldSnapshotRow extends FieldImageGrid {
  readonly frameIndex: number;
  readonly fields: Readonly<Record<string, Float32Array>>;
}

/** One stored image as read back. */
export interface StoredFieldImage extends FieldImageGrid {
  readonly k: number;
  readonly name: string;
  readonly values: Float32Array;
}

/** Columns copied by shard merges (besides realisation_id). */
export const FIELD_SNAPSHOT_COLUMNS = "k, name, t, nx, ny, x0, y0, dx, dy, data";

function encode(values: Float32Array): Uint8Array {
  const out = new Uint8Array(4 * values.length);
  const view = new DataView(out.buffer);
  for (let i = 0; i < values.length; i++) view.setFloat32(4 * i, values[i], true);
  return out;
}

function decode(data: Uint8Array, count: number): Float32Array {
  const view = new DataView(data.buffer, data.byteOffset, data.byteLength);
  const out = new Float32Array(count);
  for (let i = 0; i < count; i++) out[i] = view.getFloat32(4 * i, true);
  return out;
}

/** Inserts a realisation's snapshots (call inside its final transaction). */
export function insertFieldSnapshots(
  db: DatabaseSync,
  realisationId: number,
  snapshots: readonly FieldSnapshotRow[],
): void {
  if (snapshots.length === 0) return;
  const ins = db.prepare(
    `INSERT OR REPLACE INTO field_snapshots (realisation_id, ${FIELD_SNAPSHOT_COLUMNS})
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
  );
  for (const s of snapshots) {
    for (const [name, values] of Object.entries(s.fields)) {
      ins.run(realisationId, s.frameIndex, name, s.t, s.nx, s.ny, s.x0, s.y0, s.dx, s.dy, encode(values));
    }
  }
}

/** Every stored image of a realisation, by frame index then name. Empty when the table does not exist. */
export function readFieldSnapshots(db: DatabaseSync, realisationId: number): StoredFieldImage[] {
  if (!hasTable(db)) return [];
  const rows = db.prepare(
    `SELECT ${FIELD_SNAPSHOT_COLUMNS} FROM field_snapshots WHERE realisation_id = ? ORDER BY k, name`,
  ).all(realisationId) as Record<string, number | string | Uint8Array>[];
  return rows.map((r) => ({
    k: r.k as number,
    t: r.t as number,
    name: r.name as string,
    nx: r.nx as number,
    ny: r.ny as number,
    x0: r.x0 as number,
    y0: r.y0 as number,
    dx: r.dx as number,
    dy: r.dy as number,
    values: decode(r.data as Uint8Array, (r.nx as number) * (r.ny as number)),
  }));
}

/**
 * The done realisation with snapshots that comes first (lowest point index of the study revision, then lowest
 * realisation index), or null.
 */
export function firstRealisationWithSnapshots(
  db: DatabaseSync,
  studyId: number,
): { readonly realisationId: number; readonly pointLabel: string; readonly index: number } | null {
  if (!hasTable(db)) return null;
  const row = db.prepare(
    `SELECT r.id AS id, sp.label AS label, r.idx AS idx FROM realisations r
     JOIN study_points sp ON sp.point_hash = r.point_hash AND sp.study_id = ?
     WHERE r.status = 'done' AND EXISTS (SELECT 1 FROM field_snapshots f WHERE f.realisation_id = r.id)
     ORDER BY sp.point_index, r.idx LIMIT 1`,
  ).get(studyId) as { id: number; label: string; idx: number } | undefined;
  return row ? { realisationId: row.id, pointLabel: row.label, index: row.idx } : null;
}

/** True when the database has the field_snapshots table (databases written before it existed do not). */
export function hasTable(db: DatabaseSync): boolean {
  return db.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'field_snapshots'").get() !==
    undefined;
}
