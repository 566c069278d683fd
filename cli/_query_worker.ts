/// <reference lib="deno.worker" />
/**
 * Worker of `runQuery` (query.ts): opens the database read-only, runs the statement and posts back
 * { columns, rows, truncated } or { error: { message, hint } }. Runs apart so that the main thread can give up
 * on a query past its time limit.
 */
import { openReadOnly, queryRows } from "./query.ts";
import { UserError } from "./errors.ts";
import { registerFrameViews } from "./frame_sql.ts";

self.onmessage = (ev: MessageEvent<{ path: string; sql: string; maxRows: number }>) => {
  const { path, sql, maxRows } = ev.data;
  try {
    const db = openReadOnly(path);
    try {
      registerFrameViews(db); // frame_points: positions as rows (cli/frame_sql.ts)
      self.postMessage(queryRows(db, sql, maxRows));
    } finally {
      db.close();
    }
  } catch (e) {
    const hint = e instanceof UserError ? e.hint : undefined;
    self.postMessage({ error: { message: (e as Error)?.message ?? String(e), hint } });
  }
};
