/** Helpers for tests that run whole studies: load + normalize a study file, temp paths, database digests. */
import { DatabaseSync } from "node:sqlite";
import { createHash } from "node:crypto";
import { loadStudy, parseStudyText } from "../study/load.ts";
import { formatProblems } from "../study/problems.ts";
import { type NormalizedStudy, normalizeStudy } from "../study/normalize.ts";
import { type RunReport, runStudy } from "../study/runner.ts";
import { createProgress } from "../study/progress.ts";
import { hasTable as hasSnapshotTable, readFieldSnapshots } from "../store/snapshots.ts";

export const REPO = new URL("../", import.meta.url).pathname;

export async function loadNormalizedForTest(path: string): Promise<NormalizedStudy> {
  const loaded = await loadStudy(path);
  if (!loaded.ok) throw new Error(formatProblems(loaded.problems));
  return normalizeStudy(loaded.study, { text: loaded.text, sourcePath: path });
}

export function normalizeText(text: string, file = "inline.yaml"): NormalizedStudy {
  const loaded = parseStudyText(text, file);
  if (!loaded.ok) throw new Error(formatProblems(loaded.problems));
  return normalizeStudy(loaded.study, { text: loaded.text, sourcePath: file });
}

export function runForTest(study: NormalizedStudy, dbPath: string, workers: number): Promise<RunReport> {
  return runStudy(study, {
    dbPath,
    workers,
    progress: createProgress({ quiet: true }),
    provenance: { toolVersion: "test", denoVersion: Deno.version.deno, gitCommit: null },
  });
}

/**
 * Everything computed about realisations, keyed by realisation key (not row ids, which depend on completion
 * order): status, failure, scalars, series, events and frame blobs, as one canonical string.
 */
export function digestResults(dbPath: string): string {
  const db = new DatabaseSync(dbPath, { readOnly: true });
  try {
    const parts: string[] = [];
    const rs = db.prepare(
      "SELECT id, realisation_key, status, failure_kind, error, seed, frame_count FROM realisations ORDER BY realisation_key",
    ).all() as Record<string, unknown>[];
    for (const r of rs) {
      const id = r.id;
      parts.push(
        JSON.stringify([r.realisation_key, r.status, r.failure_kind, r.error, r.seed, r.frame_count]),
      );
      parts.push(
        JSON.stringify(
          db.prepare("SELECT name, value FROM scalars WHERE realisation_id = ? ORDER BY name")
            .all(id as number).map((x) => [x.name, x.value]),
        ),
      );
      parts.push(JSON.stringify(
        db.prepare(
          "SELECT name, k, t, value FROM series WHERE realisation_id = ? ORDER BY name, k",
        ).all(id as number).map((x) => [x.name, x.k, x.t, x.value]),
      ));
      parts.push(JSON.stringify(
        db.prepare(
          "SELECT seq, t, kind, ids_json, data_json FROM events WHERE realisation_id = ? ORDER BY seq",
        ).all(id as number).map((x) => [x.seq, x.t, x.kind, x.ids_json, x.data_json]),
      ));
      for (
        const f of db.prepare("SELECT k, t, n, layout, data FROM frames WHERE realisation_id = ? ORDER BY k")
          .all(id as number)
      ) {
        parts.push(`${f.k}|${f.t}|${f.n}|${f.layout}|${hex(f.data as Uint8Array)}`);
      }
      for (const s of hasSnapshotTable(db) ? readFieldSnapshots(db, id as number) : []) {
        parts.push(
          `snapshot ${s.k}|${s.name}|${s.t}|${s.nx}|${s.ny}|${hex(new Uint8Array(s.values.buffer))}`,
        );
      }
    }
    return parts.join("\n");
  } finally {
    db.close();
  }
}

function hex(a: Uint8Array): string {
  return `${a.length}:${createHash("sha256").update(a).digest("hex")}`;
}

export function countWhere(dbPath: string, sql: string): number {
  const db = new DatabaseSync(dbPath, { readOnly: true });
  try {
    return Number((db.prepare(sql).get() as { c: number }).c);
  } finally {
    db.close();
  }
}
