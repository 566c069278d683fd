/**
 * Checks at the door, shared by the writer (`db.ts`) and the readers (`reads.ts`): before a study database is
 * used, the file is looked at without being changed.
 *
 * 1. It is a file, not empty, and starts with SQLite's 16-byte header (else "not an SQLite file").
 * 2. It opens read-only. In a folder spindrift cannot write, a database in WAL mode cannot create its `-shm`
 *    index; it is then read into memory as an unchanging snapshot (up to `SNAPSHOT_LIMIT` bytes; SQLite's
 *    `immutable` URI flag would do it in place, but Deno's permission layer does not pass URIs), with a warning
 *    if a `-wal` file holds changes that this cannot see.
 * 3. It is a spindrift study database (a `meta` table with `schema_version`) of a version this build reads.
 * 4. `PRAGMA quick_check` passes (structure of every page and record; O(file size), about 1 s per GB).
 *    A file that passed is not checked again in this process until its size or time stamp changes.
 *
 * Nothing here writes to the file: a foreign or damaged file is refused exactly as it was found.
 */
import { DatabaseSync } from "node:sqlite";
import { resolve } from "node:path";
import { OLDEST_READABLE_VERSION, SCHEMA_VERSION } from "./schema.ts";

/** Why a database cannot be used (the `reason` of `StoreError` and `StoreReadError`). */
export type StoreProblem =
  | "missing"
  | "unreadable"
  | "not-sqlite"
  | "foreign"
  | "newer-version"
  | "corrupt"
  | "locked"
  | "read-only"
  | "other-study";

/** A problem found at the door, as data: callers turn it into their error class. */
export class DatabaseProblem extends Error {
  readonly reason: StoreProblem;
  readonly hint?: string;
  constructor(reason: StoreProblem, message: string, hint?: string) {
    super(message);
    this.name = "DatabaseProblem";
    this.reason = reason;
    this.hint = hint;
  }
}

/** What the door found. */
export interface Inspection {
  /** Schema version of the file; 0 for a file that holds no table yet (a new database). */
  readonly version: number;
  /** Opened as an unchanging snapshot because the folder is not writable. */
  readonly immutable: boolean;
  /** Things the user should know (e.g. changes in a -wal file a read-only folder hides). */
  readonly warnings: readonly string[];
}

const SQLITE_HEADER = "SQLite format 3\0";

/** The command that copies every readable realisation of a damaged database into a new file. */
export function salvageHint(path: string): string {
  const out = path.replace(/\.(sqlite3?|db)$/i, "") + "-salvaged.sqlite";
  return `copy every readable realisation into a new file with: spindrift salvage ${path} --out ${out}`;
}

function fileInfo(path: string): Deno.FileInfo | null {
  try {
    return Deno.statSync(path);
  } catch (e) {
    if (e instanceof Deno.errors.NotFound) return null;
    throw new DatabaseProblem("unreadable", `cannot read database file ${path}: ${(e as Error).message}`);
  }
}

/** Throws unless `path` starts with SQLite's header. */
export function checkHeader(path: string): void {
  let head: Uint8Array;
  try {
    const f = Deno.openSync(path, { read: true });
    try {
      head = new Uint8Array(16);
      let got = 0;
      while (got < 16) {
        const n = f.readSync(head.subarray(got));
        if (n === null) break;
        got += n;
      }
      head = head.subarray(0, got);
    } finally {
      f.close();
    }
  } catch (e) {
    throw new DatabaseProblem("unreadable", `cannot read database file ${path}: ${(e as Error).message}`);
  }
  if (new TextDecoder().decode(head) !== SQLITE_HEADER) {
    throw new DatabaseProblem(
      "not-sqlite",
      `${path} is not an SQLite database file (it does not start with SQLite's header)`,
      "give the .sqlite file that 'spindrift run' wrote for the study",
    );
  }
}

/** Largest database read into memory when its folder is read-only. */
export const SNAPSHOT_LIMIT = 2 * 1024 ** 3;

/**
 * The database read into memory, unchanging (`query_only`). Bytes 18–19 of the header say "WAL" (2); an
 * in-memory database cannot use a WAL, so the copy says "rollback journal" (1) instead (SQLite file format,
 * §1.3.3: file format write/read version numbers). The file itself is only read.
 */
function memorySnapshot(path: string): DatabaseSync {
  const size = fileInfo(path)?.size ?? 0;
  if (size > SNAPSHOT_LIMIT) {
    throw new DatabaseProblem(
      "read-only",
      `${path} is in a folder spindrift cannot write to (SQLite needs to create ${path}-shm beside a WAL ` +
        `database), and at ${(size / 1024 ** 3).toFixed(1)} GiB it is too large to read into memory instead`,
      "copy the database (with its -wal file, if any) to a folder you can write to",
    );
  }
  const bytes = Deno.readFileSync(path);
  if (bytes[18] === 2) bytes[18] = 1;
  if (bytes[19] === 2) bytes[19] = 1;
  const db = new DatabaseSync(":memory:");
  db.deserialize(bytes);
  db.exec("PRAGMA query_only = ON");
  return db;
}

function isReadOnlyPlaceError(e: unknown): boolean {
  return /readonly|read-only|unable to open database file/i.test((e as Error)?.message ?? "");
}

/**
 * Opens an existing database read-only (see the module comment, step 2). The caller closes it.
 * @throws DatabaseProblem when it cannot be opened at all.
 */
export function openReadOnlyConnection(
  path: string,
): { db: DatabaseSync; immutable: boolean; warnings: string[] } {
  const warnings: string[] = [];
  try {
    const db = new DatabaseSync(path, { readOnly: true });
    try {
      db.prepare("SELECT COUNT(*) FROM sqlite_master").get();
      return { db, immutable: false, warnings };
    } catch (e) {
      db.close();
      if (!isReadOnlyPlaceError(e)) throw e;
    }
  } catch (e) {
    if (!isReadOnlyPlaceError(e)) throw classify(path, e);
  }
  // A WAL database in a folder we cannot write: read it as a snapshot.
  const wal = fileInfo(`${path}-wal`);
  if (wal !== null && wal.size > 0) {
    warnings.push(
      `${path}-wal holds changes that cannot be read from a read-only folder; copy the database with its ` +
        "-wal file to a writable folder to see them",
    );
  }
  try {
    const db = memorySnapshot(path);
    db.prepare("SELECT COUNT(*) FROM sqlite_master").get();
    return { db, immutable: true, warnings };
  } catch (e) {
    throw classify(path, e);
  }
}

/** An SQLite error while opening or checking, as a problem for the user. */
function classify(path: string, e: unknown): DatabaseProblem {
  if (e instanceof DatabaseProblem) return e;
  const msg = (e as Error)?.message ?? String(e);
  if (/malformed|corrupt|not a database|disk image/i.test(msg)) {
    return new DatabaseProblem(
      "corrupt",
      `${path} is damaged: SQLite says "${msg}"; nothing was read from it or written to it`,
      salvageHint(path),
    );
  }
  if (/locked|busy/i.test(msg)) {
    return new DatabaseProblem("locked", `${path} is locked by another program: ${msg}`);
  }
  return new DatabaseProblem("unreadable", `cannot open ${path}: ${msg}`);
}

/** Files that passed the quick check in this process: path → size and time stamps at the check. */
const checked = new Map<string, string>();

function stamp(path: string): string {
  const parts = [path, `${path}-wal`].map((p) => {
    const i = fileInfo(p);
    return i === null ? "-" : `${i.size}/${i.mtime?.getTime() ?? 0}`;
  });
  return parts.join("|");
}

/** Runs `PRAGMA quick_check` unless this file (same size and time stamps) passed it before. */
export function quickCheck(db: DatabaseSync, path: string): void {
  const key = resolve(path);
  const s = stamp(path);
  if (checked.get(key) === s) return;
  let rows: string[];
  try {
    rows = db.prepare("PRAGMA quick_check(20)").all().map((r) => String(Object.values(r)[0]));
  } catch (e) {
    throw classify(path, e);
  }
  if (rows.length !== 1 || rows[0] !== "ok") {
    throw new DatabaseProblem(
      "corrupt",
      `${path} is damaged: SQLite's quick check found ${rows.length === 20 ? "20 or more" : rows.length} ` +
        `problem${rows.length === 1 ? "" : "s"} (${rows.slice(0, 3).join("; ")}); nothing was read from it ` +
        "or written to it",
      salvageHint(path),
    );
  }
  checked.set(key, s);
}

/** Forgets earlier quick checks of `path` (after this process changed the file). */
export function forgetCheck(path: string): void {
  checked.delete(resolve(path));
}

/** Full `PRAGMA integrity_check` (also indexes against tables, UNIQUE and NOT NULL); [] when it passes. */
export function integrityProblems(db: DatabaseSync, max = 50): string[] {
  const rows = db.prepare(`PRAGMA integrity_check(${Math.max(1, Math.floor(max))})`).all()
    .map((r) => String(Object.values(r)[0]));
  return rows.length === 1 && rows[0] === "ok" ? [] : rows;
}

/** Schema version of an open database: 0 when it has no table, else the `meta` row; throws for foreign files. */
export function schemaVersion(db: DatabaseSync, path: string): number {
  let tables: string[];
  try {
    tables = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table'").all().map((r) =>
      String(r.name)
    );
  } catch (e) {
    throw classify(path, e);
  }
  if (tables.length === 0) return 0;
  const foreign = (what: string) =>
    new DatabaseProblem(
      "foreign",
      `${path} is an SQLite file but not a spindrift study database (${what}); it was left unchanged`,
      "choose another database file (--db) for the study, or give the .sqlite file 'spindrift run' wrote",
    );
  if (!tables.includes("meta")) throw foreign("no 'meta' table");
  let row: Record<string, unknown> | undefined;
  try {
    row = db.prepare("SELECT value FROM meta WHERE key = 'schema_version'").get();
  } catch (e) {
    if (/no such column/i.test((e as Error).message)) throw foreign("its 'meta' table differs");
    throw classify(path, e);
  }
  if (row === undefined) throw foreign("no schema_version in its 'meta' table");
  const version = Number(row.value);
  if (!Number.isInteger(version) || version < OLDEST_READABLE_VERSION) {
    throw foreign(`unknown schema version '${String(row.value)}'`);
  }
  if (version > SCHEMA_VERSION) {
    throw new DatabaseProblem(
      "newer-version",
      `${path} has database schema version ${version}, written by a newer spindrift; this one reads versions ` +
        `${OLDEST_READABLE_VERSION} to ${SCHEMA_VERSION}`,
      "update spindrift (git pull, then ./spindrift --help) to use this database",
    );
  }
  return version;
}

/**
 * Looks at an existing database file without changing it (steps 1–4 of the module comment).
 * Returns null when the file does not exist or is empty (a new database).
 * @throws DatabaseProblem for a file that is not a usable study database.
 */
export function inspectDatabase(path: string): Inspection | null {
  const info = fileInfo(path);
  if (info === null) return null;
  if (!info.isFile) {
    throw new DatabaseProblem("unreadable", `not a database file (it is a directory or device): ${path}`);
  }
  if (info.size === 0) return null;
  checkHeader(path);
  const { db, immutable, warnings } = openReadOnlyConnection(path);
  try {
    const version = schemaVersion(db, path);
    if (version > 0) quickCheck(db, path);
    return { version, immutable, warnings };
  } finally {
    db.close();
  }
}
