/** Reading stored frames back, one at a time (memory does not grow with the number of frames). */
import type { DatabaseSync } from "node:sqlite";
import { type Column, decodeFrame } from "./frame_codec.ts";

export interface StoredFrame {
  readonly k: number;
  readonly t: number;
  readonly n: number;
  readonly columns: Readonly<Record<string, Column>>;
}

/** The standard columns of a stored frame, typed (null where the frame has no such column). */
export interface FrameArrays {
  readonly id: Int32Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly z: Float64Array | null;
  readonly circulation: Float64Array | null;
  readonly loop: Int32Array | null;
  readonly marker: Uint8Array | null;
  readonly label: Uint8Array | null;
}

/** Typed views of a stored frame's standard columns. */
export function frameArrays(f: StoredFrame): FrameArrays {
  const c = f.columns;
  return {
    id: c.id as Int32Array,
    x: c.x as Float64Array,
    y: c.y as Float64Array,
    z: (c.z as Float64Array | undefined) ?? null,
    circulation: (c.circulation as Float64Array | undefined) ?? null,
    loop: (c.loop as Int32Array | undefined) ?? null,
    marker: (c.marker as Uint8Array | undefined) ?? null,
    label: (c.label as Uint8Array | undefined) ?? null,
  };
}

/** Frames of one realisation in time order, decoded. */
export function* iterateFrames(db: DatabaseSync, realisationId: number): Generator<StoredFrame> {
  const stmt = db.prepare("SELECT k, t, n, layout, data FROM frames WHERE realisation_id = ? ORDER BY k");
  for (const row of stmt.iterate(realisationId) as Iterable<Record<string, unknown>>) {
    const n = Number(row.n);
    yield {
      k: Number(row.k),
      t: Number(row.t),
      n,
      columns: decodeFrame(String(row.layout), row.data as Uint8Array, n),
    };
  }
}

export interface RealisationRef {
  readonly id: number;
  readonly status: string;
  readonly pointHash: string;
  readonly index: number;
  readonly engineId: string;
}

/** The realisation row with this id, or undefined. */
export function findRealisation(db: DatabaseSync, id: number): RealisationRef | undefined {
  const row = db.prepare(
    "SELECT id, status, point_hash, idx, engine_id FROM realisations WHERE id = ?",
  ).get(id) as Record<string, unknown> | undefined;
  if (!row) return undefined;
  return {
    id: Number(row.id),
    status: String(row.status),
    pointHash: String(row.point_hash),
    index: Number(row.idx),
    engineId: String(row.engine_id),
  };
}

/** Frame k of one realisation, decoded, or undefined. */
export function readFrameAt(db: DatabaseSync, realisationId: number, k: number): StoredFrame | undefined {
  const row = db.prepare("SELECT k, t, n, layout, data FROM frames WHERE realisation_id = ? AND k = ?")
    .get(realisationId, k) as Record<string, unknown> | undefined;
  if (!row) return undefined;
  const n = Number(row.n);
  return {
    k: Number(row.k),
    t: Number(row.t),
    n,
    columns: decodeFrame(String(row.layout), row.data as Uint8Array, n),
  };
}
