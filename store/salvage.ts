/**
 * Salvage: copies every readable finished realisation of a (damaged) study database into a new file, which
 * then passes SQLite's integrity check and works with every command. The damaged file is only read.
 *
 * Method: the source is opened read-only without the door's quick check. Study revisions, points and their
 * links are copied row by row (a row that cannot be read is skipped and counted). Realisations are found by a
 * scan of their table and, where a damaged page stops the scan, by looking each row id up through the primary
 * key (up to the largest id seen), so one bad page costs only the rows on it. Each realisation is read whole —
 * row, scalars, series, events, frames (every frame blob decoded against its layout), field snapshots — and written in one
 * transaction; any read error skips that realisation with the reason. Unfinished (`running`) rows and ensemble
 * results are not copied: rerun the study to resume, and `spindrift analyse` on the new file.
 *
 * @example
 * ```ts
 * const r = salvageDatabase("film.sqlite", "film-salvaged.sqlite");
 * console.log(`${r.copied} realisations copied, ${r.unreadable.length} unreadable`);
 * ```
 */
import { DatabaseSync, type SQLInputValue } from "node:sqlite";
import { checkHeader, DatabaseProblem, integrityProblems, openReadOnlyConnection } from "./_open.ts";
import { StoreError, StudyStore } from "./db.ts";
import { decodeFrame } from "./frame_codec.ts";
import { FIELD_SNAPSHOT_COLUMNS, hasTable as hasSnapshotTable } from "./snapshots.ts";

export interface SalvageReport {
  readonly source: string;
  readonly target: string;
  /** Realisations copied, by status. */
  readonly done: number;
  readonly failed: number;
  /** Rows left out because they were still running (or left running by a killed run). */
  readonly unfinished: number;
  /** Realisations that could not be read whole: row id (null when not even the id was readable) and reason. */
  readonly unreadable: readonly { readonly id: number | null; readonly reason: string }[];
  /** Study revisions, points and point links copied, and how many of those rows could not be read. */
  readonly studies: number;
  readonly points: number;
  readonly skippedRows: number;
  /** Problems SQLite's integrity check finds in the new file ([] expected). */
  readonly targetProblems: readonly string[];
}

type Row = Record<string, SQLInputValue>;

const STUDY_COLUMNS = "id, name, description, study_hash, source_path, text, normalized_json, engine_id, " +
  "engine_version, tool_version, deno_version, git_commit, notes_json, units_json, created_at, last_run_at";
const POINT_COLUMNS =
  "point_hash, params_hash, engine_id, engine_version, params_json, controls_json, created_at";
const REALISATION_COLUMNS =
  "realisation_key, point_hash, idx, seed, status, failure_kind, error, engine_id, " +
  "engine_version, started_at, finished_at, wall_seconds, sim_time_reached, frame_count, host";

function message(e: unknown): string {
  return (e as Error)?.message ?? String(e);
}

function placeholders(columns: string): string {
  return columns.split(", ").map(() => "?").join(", ");
}

/** Rows of `sql`, as many as can be read before an error; the error (if any) is returned too. */
function readWhatYouCan(
  db: DatabaseSync,
  sql: string,
  ...args: SQLInputValue[]
): { rows: Row[]; error?: string } {
  const rows: Row[] = [];
  try {
    for (const r of db.prepare(sql).iterate(...args)) rows.push(r as Row);
    return { rows };
  } catch (e) {
    return { rows, error: message(e) };
  }
}

function hasColumn(db: DatabaseSync, table: string, column: string): boolean {
  try {
    return db.prepare(`SELECT name FROM pragma_table_info('${table}')`).all().some((r) => r.name === column);
  } catch {
    return false;
  }
}

/**
 * Copies what can be read of `source` into the new file `target` (see the module comment).
 * @throws StoreError when the source is not an SQLite file or the target exists.
 */
export function salvageDatabase(source: string, target: string): SalvageReport {
  try {
    return salvage(source, target);
  } catch (e) {
    if (e instanceof DatabaseProblem) throw new StoreError(e.message, { reason: e.reason, hint: e.hint });
    throw e;
  }
}

function salvage(source: string, target: string): SalvageReport {
  checkHeader(source);
  try {
    Deno.statSync(target);
    throw new DatabaseProblem(
      "unreadable",
      `${target} exists already; salvage writes a new file`,
      "give another --out path",
    );
  } catch (e) {
    if (!(e instanceof Deno.errors.NotFound)) throw e;
  }
  const src = openReadOnlyConnection(source).db;
  let skippedRows = 0;
  const unreadable: { id: number | null; reason: string }[] = [];
  let done = 0, failed = 0, unfinished = 0, studies = 0, points = 0;
  const store = StudyStore.open(target, { command: "salvage" });
  try {
    const dst = store.db;
    // Lineage and creation time, when readable.
    const meta = readWhatYouCan(
      src,
      "SELECT key, value FROM meta WHERE key IN ('study_name', 'accepted_names', 'created_at')",
    );
    skippedRows += meta.error ? 1 : 0;
    for (const m of meta.rows) {
      dst.prepare("INSERT OR REPLACE INTO meta (key, value) VALUES (?, ?)").run(m.key, m.value);
    }
    const studyRows = readWhatYouCan(src, `SELECT ${STUDY_COLUMNS} FROM studies ORDER BY id`);
    skippedRows += studyRows.error ? 1 : 0;
    const insStudy = dst.prepare(
      `INSERT INTO studies (${STUDY_COLUMNS}) VALUES (${placeholders(STUDY_COLUMNS)})`,
    );
    for (const s of studyRows.rows) {
      insStudy.run(...STUDY_COLUMNS.split(", ").map((c) => s[c]));
      studies++;
    }
    if (studies > 0 && meta.rows.every((m) => m.key !== "study_name")) {
      dst.prepare("INSERT OR REPLACE INTO meta (key, value) VALUES ('study_name', ?)").run(
        studyRows.rows[0].name,
      );
    }
    const inputs = hasColumn(src, "points", "inputs_json") ? ", inputs_json" : ", '{}' AS inputs_json";
    const pointRows = readWhatYouCan(src, `SELECT ${POINT_COLUMNS}${inputs} FROM points`);
    skippedRows += pointRows.error ? 1 : 0;
    const cols = `${POINT_COLUMNS}, inputs_json`;
    const insPoint = dst.prepare(`INSERT INTO points (${cols}) VALUES (${placeholders(cols)})`);
    const knownPoints = new Set<string>();
    for (const p of pointRows.rows) {
      insPoint.run(...cols.split(", ").map((c) => p[c]));
      knownPoints.add(String(p.point_hash));
      points++;
    }
    const links = readWhatYouCan(
      src,
      "SELECT study_id, point_index, point_hash, label, varied_json FROM study_points",
    );
    skippedRows += links.error ? 1 : 0;
    const knownStudies = new Set(studyRows.rows.map((s) => Number(s.id)));
    const insLink = dst.prepare("INSERT INTO study_points VALUES (?, ?, ?, ?, ?)");
    for (const l of links.rows) {
      if (knownStudies.has(Number(l.study_id)) && knownPoints.has(String(l.point_hash))) {
        insLink.run(l.study_id, l.point_index, l.point_hash, l.label, l.varied_json);
      } else skippedRows++;
    }

    // Realisation ids: a scan, completed by primary-key lookups past a damaged page.
    const seedColumn = hasColumn(src, "realisations", "master_seed") ? "master_seed" : "NULL AS master_seed";
    const scan = readWhatYouCan(src, "SELECT id FROM realisations ORDER BY id");
    const ids = new Set(scan.rows.map((r) => Number(r.id)));
    if (scan.error !== undefined) {
      let maxId = Math.max(0, ...ids);
      try {
        maxId = Math.max(maxId, Number(src.prepare("SELECT MAX(id) AS m FROM realisations").get()?.m ?? 0));
      } catch {
        // The right edge of the table is damaged too: look up to the largest id seen, and a margin.
        maxId += 1000;
      }
      const lookup = src.prepare("SELECT id FROM realisations WHERE id = ?");
      let lost = 0;
      for (let id = 1; id <= maxId; id++) {
        if (ids.has(id)) continue;
        try {
          if (lookup.get(id) !== undefined) ids.add(id);
        } catch {
          lost++;
        }
      }
      if (lost > 0) {
        unreadable.push({ id: null, reason: `${lost} row id(s) on damaged pages (${scan.error})` });
      }
    }
    const rowOf = src.prepare(`SELECT ${REALISATION_COLUMNS}, ${seedColumn} FROM realisations WHERE id = ?`);
    const children = [
      ["scalars", "name, value"],
      ["series", "name, k, t, value"],
      ["events", "seq, t, kind, ids_json, data_json"],
      ["frames", "k, t, n, layout, data"],
      ...(hasSnapshotTable(src) ? [["field_snapshots", FIELD_SNAPSHOT_COLUMNS] as const] : []),
    ] as const;
    const readChildren = children.map(([table, c]) => ({
      table,
      columns: c,
      select: src.prepare(`SELECT ${c} FROM ${table} WHERE realisation_id = ?`),
      insert: dst.prepare(`INSERT INTO ${table} (realisation_id, ${c}) VALUES (?, ${placeholders(c)})`),
    }));
    const rColumns = `${REALISATION_COLUMNS}, master_seed`;
    const insRealisation = dst.prepare(
      `INSERT INTO realisations (${rColumns}) VALUES (${placeholders(rColumns)})`,
    );
    for (const id of [...ids].sort((a, b) => a - b)) {
      let row: Row;
      const data: { insert: (typeof readChildren)[number]["insert"]; columns: string; rows: Row[] }[] = [];
      try {
        row = rowOf.get(id) as Row;
        if (row.status !== "done" && row.status !== "failed") {
          unfinished++;
          continue;
        }
        if (!knownPoints.has(String(row.point_hash))) {
          unreadable.push({ id, reason: "its parameter point could not be read" });
          continue;
        }
        for (const c of readChildren) {
          const rows = c.select.all(id) as Row[];
          if (c.table === "frames") {
            for (const f of rows) decodeFrame(String(f.layout), f.data as Uint8Array, Number(f.n));
          }
          data.push({ insert: c.insert, columns: c.columns, rows });
        }
      } catch (e) {
        unreadable.push({ id, reason: message(e) });
        continue;
      }
      store.transaction(() => {
        const newId = Number(insRealisation.run(...rColumns.split(", ").map((c) => row[c])).lastInsertRowid);
        for (const d of data) {
          const names = d.columns.split(", ");
          for (const r of d.rows) d.insert.run(newId, ...names.map((n) => r[n]));
        }
      });
      if (row.status === "done") done++;
      else failed++;
    }
    return {
      source,
      target,
      done,
      failed,
      unfinished,
      unreadable,
      studies,
      points,
      skippedRows,
      targetProblems: integrityProblems(dst),
    };
  } finally {
    store.close();
    src.close();
  }
}
