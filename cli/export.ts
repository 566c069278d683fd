/**
 * `spindrift export`: one realisation's frames as CSV or JSON lines, one row per object per frame.
 *
 * 2D columns: t, id, x, y, circulation, label. 3D columns: t, id, x, y, z, loop, order, marker, label.
 * Numbers are written with the shortest decimal that round-trips to the same double (JavaScript `String`),
 * so importing an export gives back the same bits. Labels are names: main, evaporated, stray.
 */
import { LABEL_NAMES } from "../engines/observables/labels.ts";
import { findRealisation, iterateFrames } from "../store/frames.ts";
import { openReadOnly } from "./query.ts";
import { UserError } from "./errors.ts";

export type ExportFormat = "csv" | "jsonl";

/** Writes the export to `write` chunk by chunk; returns the number of rows. */
export function exportRealisation(
  dbPath: string,
  realisationId: number,
  format: ExportFormat,
  write: (chunk: string) => void,
): number {
  const db = openReadOnly(dbPath);
  try {
    const ref = findRealisation(db, realisationId);
    if (!ref) {
      throw new UserError(
        `realisation ${realisationId} is not in ${dbPath}`,
        `list them with: spindrift query ${dbPath} "SELECT id, point_hash, idx, status FROM realisations"`,
      );
    }
    let rows = 0;
    let header = false;
    for (const f of iterateFrames(db, realisationId)) {
      const c = f.columns;
      const threeD = c.z !== undefined;
      const names = threeD
        ? ["t", "id", "x", "y", "z", "loop", "order", "marker", "label"]
        : ["t", "id", "x", "y", "circulation", "label"];
      if (!header && format === "csv") {
        write(names.join(",") + "\n");
      }
      header = true;
      const lines: string[] = [];
      let order = 0;
      for (let i = 0; i < f.n; i++) {
        const label = LABEL_NAMES[c.label?.[i] ?? 0] ?? String(c.label?.[i]);
        let values: (string | number)[];
        if (threeD) {
          if (i > 0 && c.loop && c.loop[i] !== c.loop[i - 1]) order = 0;
          values = [f.t, c.id[i], c.x[i], c.y[i], c.z[i], c.loop?.[i] ?? 0, order++, c.marker?.[i] ?? 0, label];
        } else {
          values = [f.t, c.id[i], c.x[i], c.y[i], c.circulation?.[i] ?? 0, label];
        }
        if (format === "csv") lines.push(values.map(String).join(","));
        else lines.push(JSON.stringify(Object.fromEntries(names.map((n, j) => [n, values[j]]))));
        rows++;
      }
      if (lines.length) write(lines.join("\n") + "\n");
    }
    return rows;
  } finally {
    db.close();
  }
}
