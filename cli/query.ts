/**
 * `spindrift query`: one read-only SQL statement over a study database, printed as a table, CSV or JSON.
 *
 * Guards (the database is opened read-only, so nothing can change it; these keep a query from doing anything
 * else either):
 * - exactly one statement: an empty text and a second statement after the first are refused, never ignored;
 * - only statements that read: SELECT, WITH, VALUES, EXPLAIN and the PRAGMAs that only report (an SQLite
 *   authorizer refuses every other action; VACUUM INTO, which could write a copy elsewhere, is refused by name);
 * - a time limit (default `DEFAULT_TIME_LIMIT_S`; SQLite cannot be interrupted from JavaScript, so the query runs
 *   in a worker that is abandoned at the limit) and a row limit (memory).
 *
 * @example
 * ```ts
 * console.log(await runQuery("film.sqlite", "SELECT status, COUNT(*) FROM realisations GROUP BY status", "table"));
 * ```
 */
import { constants, type DatabaseSync, type SQLOutputValue } from "node:sqlite";
import { openStoreReadOnly, StoreReadError } from "../store/reads.ts";
import { UserError } from "./errors.ts";

export type QueryFormat = "table" | "csv" | "json";

/** Default time limit of a query (seconds). */
export const DEFAULT_TIME_LIMIT_S = 120;
/** Default largest number of rows a query may return. */
export const DEFAULT_MAX_ROWS = 100_000;

export interface QueryOptions {
  /** Seconds; 0 = no limit. */
  readonly timeLimitSeconds?: number;
  readonly maxRows?: number;
}

/** The query ran past its time limit; the CLI ends the process (SQLite cannot be stopped otherwise). */
export class QueryTimeLimit extends UserError {
  constructor(seconds: number) {
    super(
      `the query was stopped after ${seconds} s (--time-limit)`,
      "add conditions or a LIMIT, or allow more time with --time-limit SECONDS (0: no limit)",
    );
    this.name = "QueryTimeLimit";
  }
}

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
      throw new UserError(
        e.message,
        e.hint ?? "give the .sqlite file that 'spindrift run' wrote for the study",
      );
    }
    throw e;
  }
}

/** PRAGMAs that only report. */
const READING_PRAGMAS = new Set([
  "table_info",
  "table_xinfo",
  "table_list",
  "index_list",
  "index_info",
  "index_xinfo",
  "foreign_key_list",
  "foreign_key_check",
  "integrity_check",
  "quick_check",
  "page_count",
  "page_size",
  "freelist_count",
  "database_list",
  "schema_version",
  "user_version",
  "compile_options",
  "function_list",
  "pragma_list",
  "collation_list",
  "encoding",
]);

/** SQL with comments replaced by spaces (strings and quoted names kept), for finding keywords and statements. */
function withoutComments(sql: string): string {
  return sql.replace(
    /'(?:[^']|'')*'|"(?:[^"]|"")*"|`[^`]*`|\[[^\]]*\]|--[^\n]*|\/\*[\s\S]*?(?:\*\/|$)/g,
    (m) => m.startsWith("--") || m.startsWith("/*") ? " ".repeat(m.length) : m,
  );
}

const HINT = "list the tables with: SELECT name FROM sqlite_master";

/**
 * SQLite's authorizer codes (sqlite3.h), read from node:sqlite's `constants`, and the authorizer hook.
 * Deno's bundled node:sqlite types lack both (the runtime has them), so they are typed here.
 */
const SQL = constants as unknown as Readonly<Record<string, number>>;
type Authorizer = (action: number, arg1: string | null) => number;
function setAuthorizer(db: DatabaseSync, f: Authorizer | null): void {
  (db as unknown as { setAuthorizer(f: Authorizer | null): void }).setAuthorizer(f);
}

/** Prepares one reading statement or throws a UserError saying what is wrong. */
export function prepareQuery(db: DatabaseSync, sql: string) {
  const bare = withoutComments(sql).trim();
  if (bare.length === 0 || /^;*$/.test(bare)) {
    throw new UserError(
      "no SQL statement given",
      'write one statement, e.g. "SELECT COUNT(*) FROM realisations"',
    );
  }
  const keyword = /^[A-Za-z]+/.exec(bare)?.[0].toUpperCase() ?? "";
  if (!["SELECT", "WITH", "VALUES", "PRAGMA", "EXPLAIN"].includes(keyword)) {
    throw new UserError(
      `query runs statements that read (SELECT, WITH, VALUES, EXPLAIN, PRAGMA), not ${keyword || "this"}`,
      "query opens databases read-only; the commands run, analyse and collect write them",
    );
  }
  const denied: string[] = [];
  const reading = new Set([SQL.SQLITE_SELECT, SQL.SQLITE_READ, SQL.SQLITE_FUNCTION, SQL.SQLITE_RECURSIVE]);
  setAuthorizer(db, (action, a1) => {
    if (reading.has(action)) return SQL.SQLITE_OK;
    if (action === SQL.SQLITE_PRAGMA && a1 !== null && READING_PRAGMAS.has(a1.toLowerCase())) {
      return SQL.SQLITE_OK;
    }
    denied.push(action === SQL.SQLITE_PRAGMA ? `PRAGMA ${a1}` : `action ${action}`);
    return SQL.SQLITE_DENY;
  });
  let stmt;
  try {
    stmt = db.prepare(sql);
  } catch (e) {
    const msg = (e as Error).message;
    if (denied.length > 0 || /not authorized|readonly|read-only/i.test(msg)) {
      throw new UserError(
        `the query tried to do more than read${denied.length ? ` (${denied[0]})` : ""}: ${msg}`,
        "query opens databases read-only and runs statements that read",
      );
    }
    throw new UserError(`SQL error: ${msg}`, HINT);
  } finally {
    setAuthorizer(db, null);
  }
  const first = withoutComments(stmt.sourceSQL).length;
  const rest = withoutComments(sql).slice(first).replace(/[\s;]/g, "");
  if (rest.length > 0) {
    throw new UserError(
      "query runs one statement, but the text holds more than one (after the first ';')",
      "run each statement on its own",
    );
  }
  return stmt;
}

/** Columns and up to `maxRows` rows of a statement; `truncated` when there were more. */
export function queryRows(
  db: DatabaseSync,
  sql: string,
  maxRows = DEFAULT_MAX_ROWS,
): { columns: string[]; rows: SQLOutputValue[][]; truncated: boolean } {
  const stmt = prepareQuery(db, sql);
  const columns = stmt.columns().map((c) => c.name);
  (stmt as unknown as { setReturnArrays(enabled: boolean): void }).setReturnArrays(true);
  const rows: SQLOutputValue[][] = [];
  try {
    for (const r of stmt.iterate() as Iterable<SQLOutputValue[]>) {
      if (rows.length === maxRows) return { columns, rows, truncated: true };
      rows.push(r);
    }
  } catch (e) {
    throw new UserError(`SQL error: ${(e as Error).message}`, HINT);
  }
  return { columns, rows, truncated: false };
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

function jsonValue(v: unknown): unknown {
  if (v instanceof Uint8Array) return `<blob ${v.byteLength} bytes>`;
  if (typeof v === "bigint") return Number(v);
  return v;
}

/** The rows as a table, CSV or JSON text. */
export function formatRows(
  result: { columns: string[]; rows: readonly unknown[][]; truncated: boolean },
  format: QueryFormat,
): string {
  const { columns, rows } = result;
  if (format === "json") {
    return JSON.stringify(
      rows.map((r) => Object.fromEntries(columns.map((c, j) => [c, jsonValue(r[j])]))),
      null,
      2,
    );
  }
  const body = rows.map((r) => columns.map((_c, j) => cell(r[j])));
  if (format === "csv") {
    return [columns.map(csvField).join(","), ...body.map((r) => r.map(csvField).join(","))].join("\n");
  }
  const widths = columns.map((c) => c.length);
  for (const r of body) for (let j = 0; j < r.length; j++) widths[j] = Math.max(widths[j], r[j].length);
  const fmt = (r: string[]) => r.map((s, j) => s.padEnd(widths[j])).join("  ").trimEnd();
  const lines = [fmt(columns), widths.map((w) => "-".repeat(w)).join("  "), ...body.map(fmt)];
  lines.push(`(${rows.length} row${rows.length === 1 ? "" : "s"})`);
  return lines.join("\n");
}

/**
 * Runs one reading statement with a time and a row limit, in a worker, and formats the rows.
 * @throws UserError (QueryTimeLimit past the limit; the worker may still be busy in SQLite, so a command line
 * should then end the process).
 */
export function runQuery(
  path: string,
  sql: string,
  format: QueryFormat,
  opts: QueryOptions = {},
): Promise<string> {
  const maxRows = opts.maxRows ?? DEFAULT_MAX_ROWS;
  const limit = opts.timeLimitSeconds ?? DEFAULT_TIME_LIMIT_S;
  const worker = new Worker(new URL("./_query_worker.ts", import.meta.url).href, { type: "module" });
  return new Promise<string>((resolve, reject) => {
    const timer = limit > 0 ? setTimeout(() => finish(new QueryTimeLimit(limit)), limit * 1000) : undefined;
    const finish = (result: string | Error) => {
      clearTimeout(timer);
      worker.terminate();
      if (typeof result === "string") resolve(result);
      else reject(result);
    };
    worker.onmessage = (ev: MessageEvent) => {
      const m = ev.data;
      if (m.error) return finish(new UserError(m.error.message, m.error.hint));
      let text = formatRows(m, format);
      if (m.truncated) {
        text += `\n(stopped after ${maxRows} rows: add a LIMIT, or allow more with --max-rows N)`;
      }
      finish(text);
    };
    worker.onerror = (ev: ErrorEvent) => {
      ev.preventDefault();
      finish(new Error(`the query worker failed: ${ev.message}`));
    };
    worker.postMessage({ path, sql, maxRows });
  });
}
