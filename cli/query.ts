/** `spindrift query`: read-only SQL over a study database, printed as a table, CSV or JSON. */
import type { DatabaseSync } from "node:sqlite";
import { openStoreReadOnly, StoreReadError } from "../store/reads.ts";
import { UserError } from "./errors.ts";
import { registerFrameViews } from "./frame_sql.ts";

export type QueryFormat = "table" | "csv" | "json";

/** Opens a study database read-only, with a clear message when it is missing or not a study database. */
export function openReadOnly(path: string): DatabaseSync {
  try {
    Deno.statSync(path);
  } catch {
    throw new UserError(`database ${path} does not exist`, "run the study first: spindrift run STUDY.yaml");
  }
  try {
    return openStoreReadOnly(path);
  } catch (e) {
    if (e instanceof StoreReadError) {
      throw new UserError(e.message, "give the .sqlite file that 'spindrift run' wrote for the study");
    }
    throw e;
  }
}

function cell(v: unknown): string {
  if (v === null || v === undefined) return "";
  if (v instanceof Uint8Array) return `<blob ${v.byteLength} bytes>`;
  if (typeof v === "bigint") return v.toString();
  return String(v);
}

function csvField(s: string): string {
  return /[",\n\r]/.test(s) ? `"${s.replaceAll('"', '""')}"` : s;
}

/** Runs one SQL statement read-only and formats the rows. */
export function runQuery(path: string, sql: string, format: QueryFormat): string {
  const db = openReadOnly(path);
  try {
    registerFrameViews(db); // frame_points: positions as rows (cli/frame_sql.ts)
    let rows: Record<string, unknown>[];
    let columns: string[];
    try {
      const stmt = db.prepare(sql);
      columns = stmt.columns().map((c) => c.name);
      rows = stmt.all() as Record<string, unknown>[];
    } catch (e) {
      const msg = (e as Error).message;
      if (/readonly|read-only/i.test(msg)) {
        throw new UserError(
          `the query tried to change the database: ${msg}`,
          "query opens databases read-only",
        );
      }
      throw new UserError(`SQL error: ${msg}`, "list the tables with: SELECT name FROM sqlite_master");
    }
    if (format === "json") {
      return JSON.stringify(
        rows.map((r) => Object.fromEntries(columns.map((c) => [c, jsonValue(r[c])]))),
        null,
        2,
      );
    }
    const body = rows.map((r) => columns.map((c) => cell(r[c])));
    if (format === "csv") {
      return [columns.map(csvField).join(","), ...body.map((r) => r.map(csvField).join(","))].join("\n");
    }
    const widths = columns.map((c, j) => Math.max(c.length, ...body.map((r) => r[j].length)));
    const fmt = (r: string[]) => r.map((s, j) => s.padEnd(widths[j])).join("  ").trimEnd();
    const lines = [fmt(columns), widths.map((w) => "-".repeat(w)).join("  "), ...body.map(fmt)];
    lines.push(`(${rows.length} row${rows.length === 1 ? "" : "s"})`);
    return lines.join("\n");
  } finally {
    db.close();
  }
}

function jsonValue(v: unknown): unknown {
  if (v instanceof Uint8Array) return `<blob ${v.byteLength} bytes>`;
  if (typeof v === "bigint") return Number(v);
  return v;
}
