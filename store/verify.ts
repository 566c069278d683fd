/**
 * `spindrift verify`: SQLite's full integrity check of a study database (every page, every index against its
 * table, UNIQUE and NOT NULL constraints, foreign keys), read-only. The door's quick check on every open skips
 * the index comparisons; this is the thorough one, O(file size).
 *
 * @example
 * ```ts
 * const v = verifyDatabase("film.sqlite");
 * if (v.problems.length > 0) console.log(v.problems.join("\n"));
 * ```
 */
import {
  checkHeader,
  DatabaseProblem,
  integrityProblems,
  openReadOnlyConnection,
  schemaVersion,
} from "./_open.ts";
import { StoreError } from "./db.ts";

export interface VerifyReport {
  readonly version: number;
  /** Integrity and foreign-key problems; [] for a sound file. */
  readonly problems: readonly string[];
  /** Realisations by status (when the table could be read). */
  readonly realisations: Readonly<Record<string, number>> | null;
}

/**
 * Runs the full check on the database at `path`.
 * @throws StoreError for a file that is not an SQLite file or not a spindrift database.
 */
export function verifyDatabase(path: string): VerifyReport {
  try {
    return verify(path);
  } catch (e) {
    if (e instanceof DatabaseProblem) throw new StoreError(e.message, { reason: e.reason, hint: e.hint });
    throw e;
  }
}

function verify(path: string): VerifyReport {
  checkHeader(path);
  const { db } = openReadOnlyConnection(path);
  try {
    const version = schemaVersion(db, path);
    let problems: string[];
    try {
      problems = integrityProblems(db, 100);
      problems.push(
        ...db.prepare("PRAGMA foreign_key_check").all().map((r) =>
          `row ${String(r.rowid)} of ${String(r.table)} refers to a missing row of ${String(r.parent)}`
        ),
      );
    } catch (e) {
      problems = [(e as Error).message];
    }
    let realisations: Record<string, number> | null = null;
    try {
      realisations = Object.fromEntries(
        db.prepare("SELECT status, COUNT(*) AS n FROM realisations GROUP BY status").all().map((r) => [
          String(r.status),
          Number(r.n),
        ]),
      );
    } catch {
      realisations = null;
    }
    return { version, problems, realisations };
  } finally {
    db.close();
  }
}
