/**
 * `spindrift export`: one realisation's frames as CSV or JSON lines, one row per object per frame.
 *
 * CSV is exactly the format the imported-data engines read (engines/imported/export_format.ts): 2D columns
 * t, id, x, y, circulation, label; 3D columns t, id, x, y, z, loop, order, marker, label; numbers as the shortest
 * decimal that round-trips to the same double, so importing an export gives back the same bits. Labels are
 * names: main, evaporated, stray. JSON lines carry the same fields, one object per row.
 */
import { LABEL_NAMES } from "../engines/observables/labels.ts";
import { type ExportFrame, writeFramesCsv } from "../engines/imported/mod.ts";
import type { ByteWriter } from "../engines/imported/export_format.ts";
import { findRealisation, frameArrays, iterateFrames, type StoredFrame } from "../store/frames.ts";
import { openReadOnly } from "./query.ts";
import { UserError } from "./errors.ts";

export type ExportFormat = "csv" | "jsonl";

function toExportFrame(f: StoredFrame): ExportFrame {
  return { t: f.t, n: f.n, ...frameArrays(f) };
}

function* jsonLines(frames: Iterable<ExportFrame>): Generator<string> {
  for (const f of frames) {
    const lines: string[] = [];
    let order = 0;
    for (let i = 0; i < f.n; i++) {
      const label = f.label ? LABEL_NAMES[f.label[i]] ?? String(f.label[i]) : "main";
      if (f.z) {
        if (i > 0 && f.loop && f.loop[i] !== f.loop[i - 1]) order = 0;
        lines.push(JSON.stringify({
          t: f.t,
          id: f.id[i],
          x: f.x[i],
          y: f.y[i],
          z: f.z[i],
          loop: f.loop?.[i] ?? 0,
          order: order++,
          marker: f.marker?.[i] ?? 0,
          label,
        }));
      } else {
        lines.push(JSON.stringify({
          t: f.t,
          id: f.id[i],
          x: f.x[i],
          y: f.y[i],
          circulation: f.circulation?.[i] ?? 0,
          label,
        }));
      }
    }
    if (lines.length) yield lines.join("\n") + "\n";
  }
}

/** Writes the export to `writer`; returns the number of object rows. */
export async function exportRealisation(
  dbPath: string,
  realisationId: number,
  format: ExportFormat,
  writer: ByteWriter,
): Promise<number> {
  const db = openReadOnly(dbPath);
  try {
    const ref = findRealisation(db, realisationId);
    if (!ref) {
      throw new UserError(
        `realisation ${realisationId} is not in ${dbPath}`,
        `list them with: spindrift query ${dbPath} "SELECT id, point_hash, idx, status FROM realisations"`,
      );
    }
    const first = iterateFrames(db, realisationId).next();
    if (first.done) throw new UserError(`realisation ${realisationId} has no stored frames`);
    const dimension = first.value.columns.z !== undefined ? 3 : 2;
    const frames = (function* () {
      for (const f of iterateFrames(db, realisationId)) yield toExportFrame(f);
    })();
    if (format === "csv") {
      const res = await writeFramesCsv(frames, writer, {
        dimension,
        comments: [`spindrift export of realisation ${realisationId} (index ${ref.index}) from ${dbPath}`],
      });
      return res.rows;
    }
    const enc = new TextEncoder();
    let rows = 0;
    for (const chunk of jsonLines(frames)) {
      rows += chunk.split("\n").length - 1;
      await writer.write(enc.encode(chunk));
    }
    return rows;
  } finally {
    db.close();
  }
}
