/**
 * `spindrift status DB [--json] [--watch [SECONDS]]`: per parameter point, how many realisations are done,
 * failed, running and missing (with a cluster results folder also queued and not yet collected).
 *
 * `--json` prints one object (shape below; documented in README.md, "Machine-readable output"; tested in
 * status_test.ts). `--watch` refreshes until Ctrl-C, or until every planned realisation is done or failed and
 * nothing runs; on a terminal the screen is redrawn, otherwise each refresh is appended (with `--json`: one
 * JSON object per line).
 *
 * ```json
 * { "database", "at", "study": { "id", "name", "lastRunAt" }, "realisationsPerPoint", "writer",
 *   "points": [ { "index", "label", "planned", "done", "failed", "running", "missing",
 *                 "queued"?, "uncollected"? } ],
 *   "totals": { "planned", "done", "failed", "running", "missing" },
 *   "cluster": null | { "resultsDir", "shards", "jobs": [ { "submission", "jobId", "tasks", "queued",
 *              "running" } ], "missing": { … }, "queueProblem"?, "unreadableShards", "manifestProblems" } }
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import { resolve } from "node:path";
import { type PointStatus, studyStatus } from "../store/status.ts";
import * as cluster from "../study/executors/mod.ts";
import { openReadOnly } from "./query.ts";
import { UserError } from "./errors.ts";
import { describeHolder, isWriterActive, readWriterLock } from "../store/lock.ts";

/** Per-point counts as `status --json` prints them (with a cluster results folder also queued, uncollected). */
export type StatusPoint = Omit<PointStatus, "pointIndex"> & {
  readonly index: number;
  readonly queued?: number;
  readonly uncollected?: number;
};

/** The `status --json` object. */
export interface StatusReport {
  readonly database: string;
  readonly at: string;
  readonly study: { readonly id: number; readonly name: string; readonly lastRunAt: string | null };
  readonly realisationsPerPoint: number;
  /** The process writing the database now (command, host, pid), or null. */
  readonly writer: string | null;
  readonly points: readonly StatusPoint[];
  readonly totals: {
    readonly planned: number;
    readonly done: number;
    readonly failed: number;
    readonly running: number;
    readonly missing: number;
  };
  readonly cluster: Record<string, unknown> | null;
}

/** Options of the status command. */
export interface StatusOptions {
  readonly results?: string;
  readonly batch?: cluster.BatchSystem;
}

function resultsFolder(dbPath: string, results: string | undefined): string | null {
  const dir = results ?? cluster.defaultResultsDir(dbPath);
  try {
    Deno.statSync(dir);
    return dir;
  } catch {
    if (results !== undefined) throw new cluster.ExecutorError(`there is no cluster results folder ${dir}`);
    return null;
  }
}

/** The status of the latest study revision in `dbPath`, as data and as the text `spindrift status` prints. */
export async function readStatus(
  db: DatabaseSync,
  dbPath: string,
  opts: StatusOptions = {},
): Promise<{ report: StatusReport; lines: string[] }> {
  const s = studyStatus(db);
  if (!s) throw new UserError(`${dbPath} holds no study yet`, "run one with: spindrift run STUDY.yaml");
  const dir = resultsFolder(dbPath, opts.results);
  const c = dir ? await cluster.clusterStatus(db, { resultsDir: dir, batch: opts.batch }) : undefined;
  const planned = s.points[0]?.planned ?? 0;
  // Both sources count per point under the same names; the JSON calls the point's index `index`.
  const points: StatusPoint[] = (c?.points ?? s.points).map(({ pointIndex, ...counts }) => ({
    index: pointIndex,
    ...counts,
  }));
  const sum = (k: "planned" | "done" | "failed" | "running" | "missing") =>
    points.reduce((a, p) => a + p[k], 0);
  const holder = isWriterActive(dbPath) ? readWriterLock(dbPath) : undefined;
  const report: StatusReport = {
    database: resolve(dbPath),
    at: new Date().toISOString(),
    study: { id: s.studyId, name: s.name, lastRunAt: s.lastRunAt },
    realisationsPerPoint: planned,
    writer: holder ? describeHolder(holder) : null,
    points,
    totals: {
      planned: sum("planned"),
      done: sum("done"),
      failed: sum("failed"),
      running: sum("running"),
      missing: sum("missing"),
    },
    cluster: c
      ? {
        resultsDir: resolve(dir!),
        shards: c.shards,
        jobs: c.jobs,
        missing: c.missing,
        ...(c.queueProblem !== undefined ? { queueProblem: c.queueProblem } : {}),
        unreadableShards: c.unreadableShards,
        manifestProblems: c.manifestProblems,
      }
      : null,
  };
  return { report, lines: c ? cluster.clusterStatusText(c, dir!) : localLines(report) };
}

/** The table of a study without a cluster results folder. */
function localLines(r: StatusReport): string[] {
  const w = Math.max(5, ...r.points.map((p) => p.label.length));
  const out = [`study ${r.study.name} (last run ${r.study.lastRunAt ?? "never"})`];
  if (r.writer) out.push(`  being written now by ${r.writer}`);
  out.push(`  ${"point".padEnd(w)}  done  failed  running  missing`);
  for (const p of r.points) {
    out.push(
      `  ${p.label.padEnd(w)}  ${String(p.done).padStart(4)}  ${String(p.failed).padStart(6)}  ` +
        `${String(p.running).padStart(7)}  ${String(p.missing).padStart(7)}`,
    );
  }
  return out;
}

/** True when every planned realisation is done or failed and nothing runs or waits. */
export function finished(r: StatusReport): boolean {
  return r.totals.missing === 0 && r.totals.running === 0 &&
    r.points.every((p) => (p.queued ?? 0) === 0 && (p.uncollected ?? 0) === 0);
}

function percent(n: number, of: number): string {
  return of > 0 ? `${Math.floor(100 * n / of)} %` : "-";
}

/** One refresh of `status --watch` as text: a header line, the table, and what changed since the last one. */
function watchLines(
  lines: string[],
  r: StatusReport,
  last: StatusReport | undefined,
  every: number,
): string[] {
  const t = r.totals;
  const step = last
    ? `, +${t.done + t.failed - last.totals.done - last.totals.failed} since the last refresh`
    : "";
  const head = `${r.at.slice(11, 19)} UTC  ${t.done + t.failed} of ${t.planned} finished (${
    percent(t.done + t.failed, t.planned)
  })${step}; ${t.running} running`;
  const tail = finished(r)
    ? "every planned realisation is finished"
    : `refreshing every ${every} s; Ctrl-C to stop (the run is not affected)`;
  return [head, ...lines, tail];
}

/**
 * Prints the status once, or (with `watch`) every `watch` seconds until Ctrl-C or the study is finished.
 * Each refresh reopens the database, so a run in progress is seen as it commits.
 */
export async function statusCommand(
  dbPath: string,
  opts: StatusOptions & { readonly json?: boolean; readonly watch?: number; readonly signal?: AbortSignal },
  write: (text: string) => void,
): Promise<void> {
  const once = async () => {
    const db = openReadOnly(dbPath);
    try {
      return await readStatus(db, dbPath, opts);
    } finally {
      db.close();
    }
  };
  if (opts.watch === undefined) {
    const { report, lines } = await once();
    write(opts.json ? JSON.stringify(report, null, 2) : lines.join("\n"));
    return;
  }
  const terminal = Deno.stdout.isTerminal();
  let last: StatusReport | undefined;
  for (;;) {
    const { report, lines } = await once();
    if (opts.json) write(JSON.stringify(report));
    else {
      const text = watchLines(lines, report, last, opts.watch).join("\n");
      write(terminal ? `\x1b[H\x1b[2J${text}` : `${text}\n`);
    }
    last = report;
    if (finished(report) || opts.signal?.aborted) return;
    const stopped = await new Promise<boolean>((done) => {
      const timer = setTimeout(() => done(false), opts.watch! * 1000);
      opts.signal?.addEventListener("abort", () => {
        clearTimeout(timer);
        done(true);
      }, { once: true });
    });
    if (stopped) return;
  }
}
