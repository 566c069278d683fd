/**
 * `spindrift export`: one realisation's frames as CSV or JSON lines, one row per object per frame.
 *
 * Selection: by parameter point (its index in the study's sweep order, or its label) and realisation index
 * within that point — the numbers `status`, the report and `realisations.idx` use — or by the database row id
 * (`realisations.id`). The output has no comment lines, so spreadsheet and data-frame readers take it as it is;
 * `--provenance FILE` writes where it came from (database, study, point, index, seed, engine) as JSON beside it.
 *
 * CSV is exactly the format the imported-data engines read (engines/imported/export_format.ts): 2D columns
 * t, id, x, y, circulation, label; 3D columns t, id, x, y, z, loop, order, marker, label; numbers as the shortest
 * decimal that round-trips to the same double, so importing an export gives back the same bits. Labels are
 * names: main, evaporated, stray. JSON lines carry the same fields, one object per row.
 */
import { resolve } from "node:path";
import type { DatabaseSync } from "node:sqlite";
import { LABEL_NAMES } from "../engines/observables/labels.ts";
import { type ExportFrame, writeFramesCsv } from "../engines/imported/mod.ts";
import type { ByteWriter } from "../engines/imported/export_format.ts";
import { findRealisation, frameArrays, iterateFrames, type StoredFrame } from "../store/frames.ts";
import { readRealisations, readStudy, readStudyPoints } from "../store/reads.ts";
import { openReadOnly } from "./query.ts";
import { UserError } from "./errors.ts";
import { TOOL_VERSION } from "./provenance.ts";

export type ExportFormat = "csv" | "jsonl";

/** Which realisation to export: `point` + `index`, or the database row `id`. */
export interface ExportSelection {
  /** Parameter point: its index in sweep order ("0", "1", …) or its label ("initial.count=140"). */
  readonly point?: string;
  /** Realisation index within the point (0, 1, …). */
  readonly index?: number;
  /** Database row id (`realisations.id`), instead of point and index. */
  readonly id?: number;
  /** Study revision (default: the latest). */
  readonly study?: number;
}

/** The realisation an export selection names, with what identifies it. */
export interface ExportTarget {
  readonly id: number;
  readonly index: number;
  readonly status: string;
  readonly seed: string;
  readonly engineId: string;
  readonly engineVersion: string;
  readonly pointHash: string;
  /** Index and label of the point in the study revision, when the realisation belongs to it. */
  readonly point: { readonly index: number; readonly label: string; readonly params: unknown } | null;
  readonly study: { readonly id: number; readonly name: string; readonly hash: string };
}

/** "0 initial.count=100, 1 initial.count=140" (the first few). */
function pointList(points: readonly { index: number; label: string }[]): string {
  const shown = points.slice(0, 8).map((p) => `${p.index} ${p.label}`).join(", ");
  return points.length > 8 ? `${shown}, … (${points.length} points)` : shown;
}

/** Finds the realisation `sel` names, or throws a UserError saying what there is. */
export function selectRealisation(db: DatabaseSync, sel: ExportSelection, dbPath: string): ExportTarget {
  const study = readStudy(db, { studyId: sel.study });
  const points = readStudyPoints(db, study.id);
  const studyRef = { id: study.id, name: study.name, hash: study.studyHash };
  if (sel.id !== undefined) {
    if (sel.point !== undefined || sel.index !== undefined) {
      throw new UserError("--id selects a realisation by itself: leave out --point and --index");
    }
    const ref = findRealisation(db, sel.id);
    if (!ref) {
      throw new UserError(
        `there is no realisation with database id ${sel.id} in ${dbPath}`,
        `list them with: spindrift query ${dbPath} "SELECT id, point_hash, idx, status FROM realisations"`,
      );
    }
    const row = readRealisations(db, ref.pointHash, { seed: null }).find((r) => r.id === sel.id)!;
    const p = points.find((q) => q.pointHash === ref.pointHash);
    return {
      ...row,
      point: p ? { index: p.index, label: p.label, params: p.params } : null,
      study: studyRef,
    };
  }
  let point = points.length === 1 && sel.point === undefined ? points[0] : undefined;
  if (sel.point !== undefined) {
    point = /^\d+$/.test(sel.point)
      ? points.find((p) => p.index === Number(sel.point))
      : points.find((p) => p.label === sel.point);
    if (!point) {
      throw new UserError(
        `study ${study.name} has no parameter point '${sel.point}'`,
        `give its index or its label: ${pointList(points)}`,
      );
    }
  }
  if (!point) {
    throw new UserError(
      `say which parameter point: study ${study.name} has ${points.length}`,
      `add --point with an index or a label: ${pointList(points)}`,
    );
  }
  const rows = readRealisations(db, point.pointHash, { seed: study.seed });
  if (sel.index === undefined) {
    throw new UserError(
      "say which realisation: add --index (0, 1, … within the point)",
      rows.length
        ? `point ${point.index} (${point.label}) has indices ${rows[0].index}–${rows.at(-1)!.index}`
        : undefined,
    );
  }
  const row = rows.find((r) => r.index === sel.index);
  if (!row) {
    throw new UserError(
      `realisation ${sel.index} of point ${point.index} (${point.label}) is not stored in ${dbPath}`,
      rows.length === 0
        ? "nothing of that point is stored yet: run the study first"
        : `stored: ${rows.length} realisation(s), indices ${rows[0].index}–${
          rows.at(-1)!.index
        }; see spindrift status ${dbPath}`,
    );
  }
  return { ...row, point: { index: point.index, label: point.label, params: point.params }, study: studyRef };
}

/** "realisation 3 of point 1 (initial.count=140), database id 131". */
export function describeTarget(t: ExportTarget): string {
  const where = t.point ? `point ${t.point.index} (${t.point.label})` : `point ${t.pointHash.slice(0, 12)}…`;
  return `realisation ${t.index} of ${where}, database id ${t.id}`;
}

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

/** What an export wrote. */
export interface ExportResult {
  readonly target: ExportTarget;
  readonly rows: number;
  readonly frames: number;
}

/** Writes the selected realisation's frames to `writer`. */
export async function exportRealisation(
  dbPath: string,
  sel: ExportSelection,
  format: ExportFormat,
  writer: ByteWriter,
): Promise<ExportResult> {
  const db = openReadOnly(dbPath);
  try {
    const target = selectRealisation(db, sel, dbPath);
    const first = iterateFrames(db, target.id).next();
    if (first.done) {
      throw new UserError(
        `${describeTarget(target)} has no stored frames (status ${target.status})`,
        target.status === "done" ? undefined : "rerun the study to complete it: spindrift run STUDY.yaml",
      );
    }
    const dimension = first.value.columns.z !== undefined ? 3 : 2;
    let frames = 0;
    const stream = (function* () {
      for (const f of iterateFrames(db, target.id)) {
        frames++;
        yield toExportFrame(f);
      }
    })();
    if (format === "csv") {
      const res = await writeFramesCsv(stream, writer, { dimension });
      return { target, rows: res.rows, frames };
    }
    const enc = new TextEncoder();
    let rows = 0;
    for (const chunk of jsonLines(stream)) {
      rows += chunk.split("\n").length - 1;
      await writer.write(enc.encode(chunk));
    }
    return { target, rows, frames };
  } finally {
    db.close();
  }
}

/** The provenance record `--provenance FILE` writes: where an export came from. */
export function exportProvenance(
  dbPath: string,
  res: ExportResult,
  format: ExportFormat,
): Record<string, unknown> {
  const t = res.target;
  return {
    database: resolve(dbPath),
    study: t.study,
    point: t.point ? { ...t.point, hash: t.pointHash } : { hash: t.pointHash },
    realisation: { index: t.index, id: t.id, seed: t.seed, status: t.status },
    engine: { id: t.engineId, version: t.engineVersion },
    format,
    frames: res.frames,
    rows: res.rows,
    tool: { name: "spindrift", version: TOOL_VERSION },
  };
}
