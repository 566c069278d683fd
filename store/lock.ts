/**
 * One writer per study database: the writer holds an exclusive operating-system lock (`flock`) on a lock file
 * beside the database, `<database>.lock`, and writes into it who it is (command, host, process id, since when).
 * A second writer's non-blocking attempt fails at once, and its message names the holder from that file. A
 * file beside the database, not a row in it, so that a refused command leaves the database byte for byte as it
 * was.
 *
 * Stale locks cannot block anyone: the operating system drops the lock when its process ends, however it ends
 * (SIGKILL, a crash, a lost node). A lock file whose lock nobody holds is a leftover; the next writer takes it
 * and says whose it was. Over a network file system this relies on the file system's locking (NFS v4, or v3
 * with lockd, forwards it); without it, run one writer at a time by hand.
 *
 * Releasing removes the file while still holding the lock; a writer that locked the file just before it was
 * removed notices (the path no longer names the file it locked) and tries again, so two writers never hold
 * the lock of one database. Within one process the lock is re-entrant (the CLI may open the store twice).
 *
 * @example
 * ```ts
 * const lock = acquireWriterLock("film.sqlite", "run");
 * try { ... } finally { lock.release(); }
 * ```
 */
import { resolve } from "node:path";
import { DatabaseProblem } from "./_open.ts";

/** Who holds (or held) the lock, as written into the lock file. */
export interface LockHolder {
  readonly command: string;
  readonly host: string;
  readonly pid: number;
  readonly since: string;
}

/** A held lock. */
export interface WriterLock {
  /** Set when a lock file left by an ended writer was taken over: who had left it. */
  readonly tookOverFrom: LockHolder | null;
  /** Set when the file system cannot lock files: why (one writer at a time is then not enforced). */
  readonly unsupported?: string;
  release(): void;
}

/** Host name, or "unknown" without the permission. */
export function hostName(): string {
  try {
    return Deno.hostname();
  } catch {
    return "unknown";
  }
}

/** The lock file of a database. */
export function lockPath(dbPath: string): string {
  return `${dbPath}.lock`;
}

function parseHolder(text: string): LockHolder | undefined {
  try {
    const h = JSON.parse(text);
    return typeof h === "object" && h !== null && typeof h.pid === "number" ? h as LockHolder : undefined;
  } catch {
    return undefined;
  }
}

/** Who the lock file of a database names (the holder, or the writer that left it), if anyone. */
export function readWriterLock(dbPath: string): LockHolder | undefined {
  try {
    return parseHolder(Deno.readTextFileSync(lockPath(dbPath)));
  } catch {
    return undefined;
  }
}

/** True when a live process holds the writer lock of the database (readers use it to say a run is writing). */
export function isWriterActive(dbPath: string): boolean {
  let f: Deno.FsFile;
  try {
    f = Deno.openSync(lockPath(dbPath), { read: true, write: true });
  } catch {
    return false;
  }
  try {
    if (!f.tryLockSync(true)) return true;
    f.unlockSync();
    return false;
  } catch {
    return false; // a file system without locks: nobody can be known to hold it
  } finally {
    f.close();
  }
}

/** "'spindrift run' on host n12, process 4711, since 2026-…". */
export function describeHolder(h: LockHolder): string {
  return `'spindrift ${h.command}' on host ${h.host}, process ${h.pid}, since ${h.since}`;
}

interface Held {
  readonly file: Deno.FsFile;
  readonly path: string;
  count: number;
}
/** Locks held by this process, by resolved database path. */
const held = new Map<string, Held>();

function sameFile(a: Deno.FileInfo, b: Deno.FileInfo): boolean {
  return a.ino === b.ino && a.dev === b.dev;
}

/**
 * Takes the writer lock of the database at `path` for `command`.
 * @throws DatabaseProblem "locked" when a live writer holds it, "read-only" when the lock file cannot be made.
 */
export function acquireWriterLock(path: string, command: string): WriterLock {
  const key = resolve(path);
  const mine = held.get(key);
  if (mine) {
    mine.count++;
    return { tookOverFrom: null, release: () => release(key) };
  }
  const file = lockPath(path);
  for (let attempt = 0; attempt < 5; attempt++) {
    let f: Deno.FsFile;
    try {
      f = Deno.openSync(file, { read: true, write: true, create: true });
    } catch (e) {
      throw new DatabaseProblem(
        "read-only",
        `cannot create the writer lock ${file}: ${(e as Error).message}; nothing was changed`,
        "spindrift writes a lock file beside the database: check that you may write in that folder",
      );
    }
    let locked = false;
    try {
      try {
        locked = f.tryLockSync(true);
      } catch (e) {
        // A file system without locks (some network mounts): run unguarded rather than not at all, and say so.
        f.close();
        try {
          Deno.removeSync(file);
        } catch {
          // Leave it.
        }
        return { tookOverFrom: null, unsupported: (e as Error).message, release: () => {} };
      }
      if (!locked) {
        const holder = readWriterLock(path);
        throw new DatabaseProblem(
          "locked",
          `${path} is being written by ${
            holder ? describeHolder(holder) : "another spindrift command"
          }; only ` +
            "one command may write a study database at a time, and nothing was changed",
          holder && holder.host === hostName()
            ? `wait for it to finish (or stop it with Ctrl-C or: kill ${holder.pid}), then run this again`
            : "wait for it to finish, then run this again",
        );
      }
      // Released and removed by its holder just before we locked it: start again with the file now there.
      let current: Deno.FileInfo | null = null;
      try {
        current = Deno.statSync(file);
      } catch {
        current = null;
      }
      if (current === null || !sameFile(current, f.statSync())) {
        f.unlockSync();
        locked = false;
        f.close();
        continue;
      }
      const before = new Uint8Array(f.statSync().size);
      f.seekSync(0, Deno.SeekMode.Start);
      let got = 0;
      while (got < before.length) {
        const n = f.readSync(before.subarray(got));
        if (n === null) break;
        got += n;
      }
      const tookOverFrom = parseHolder(new TextDecoder().decode(before.subarray(0, got))) ?? null;
      const holder: LockHolder = {
        command,
        host: hostName(),
        pid: Deno.pid,
        since: new Date().toISOString(),
      };
      f.truncateSync(0);
      f.seekSync(0, Deno.SeekMode.Start);
      f.writeSync(new TextEncoder().encode(JSON.stringify(holder) + "\n"));
      held.set(key, { file: f, path: file, count: 1 });
      return { tookOverFrom, release: () => release(key) };
    } catch (e) {
      if (locked) f.unlockSync();
      f.close();
      throw e;
    }
  }
  throw new DatabaseProblem("locked", `cannot take the writer lock ${file}: it keeps being replaced`);
}

function release(key: string): void {
  const h = held.get(key);
  if (!h || --h.count > 0) return;
  held.delete(key);
  drop(h);
}

/** Removes the lock file while still holding the lock, then lets go of it. */
function drop(h: Held): void {
  try {
    Deno.removeSync(h.path);
  } catch {
    // Already gone, or the folder became read-only: the lock is dropped anyway, the file is a leftover.
  }
  try {
    h.file.unlockSync();
  } finally {
    h.file.close();
  }
}

/** Releases every lock this process holds (before an immediate exit that skips every `close`). */
export function releaseHeldLocks(): void {
  for (const [key, h] of held) {
    held.delete(key);
    drop(h);
  }
}
