import { DatabaseSync } from "node:sqlite";
import { createHash } from "node:crypto";
import { assert, assertEquals } from "../test/_assert.ts";
import { StoreError, StudyStore } from "./db.ts";
import { openStoreReadOnly, StoreReadError } from "./reads.ts";
import { damagePage, writeStudyDb } from "./_testing.ts";
import { SCHEMA_SQL } from "./schema.ts";

function fileHash(path: string): string {
  return createHash("sha256").update(Deno.readFileSync(path)).digest("hex");
}

function siblings(dir: string): string[] {
  return [...Deno.readDirSync(dir)].map((e) => e.name).sort();
}

function thrown(f: () => unknown): unknown {
  try {
    f();
  } catch (e) {
    return e;
  }
  throw new Error("expected a throw");
}

Deno.test("StudyStore.open refuses another program's SQLite file and leaves it exactly as it was", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = `${dir}/inventory.db`;
    const other = new DatabaseSync(path);
    other.exec(
      "CREATE TABLE parts (id INTEGER PRIMARY KEY, name TEXT); INSERT INTO parts VALUES (1, 'valve')",
    );
    other.close();
    const before = fileHash(path);
    const e = thrown(() => StudyStore.open(path));
    assert(e instanceof StoreError && e.reason === "foreign", String(e));
    assert(
      e.message.includes("not a spindrift study database") && e.message.includes("left unchanged"),
      e.message,
    );
    assert(e.hint?.includes("--db"), e.hint);
    assertEquals(fileHash(path), before, "byte for byte");
    assertEquals(siblings(dir), ["inventory.db"], "no -wal, -shm or lock file was created");
    const check = new DatabaseSync(path, { readOnly: true });
    assertEquals(
      String(check.prepare("PRAGMA journal_mode").get()!.journal_mode),
      "delete",
      "not switched to WAL",
    );
    check.close();
    const r = thrown(() => openStoreReadOnly(path));
    assert(r instanceof StoreReadError && r.reason === "foreign", String(r));
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("StudyStore.open and openStoreReadOnly refuse a file that is not SQLite, and a newer schema", () => {
  const dir = Deno.makeTempDirSync();
  try {
    Deno.writeTextFileSync(`${dir}/notes.sqlite`, "t,x,y\n0,1,2\n".repeat(100));
    const e = thrown(() => StudyStore.open(`${dir}/notes.sqlite`));
    assert(e instanceof StoreError && e.reason === "not-sqlite", String(e));
    const future = new DatabaseSync(`${dir}/future.sqlite`);
    future.exec(SCHEMA_SQL);
    future.exec("INSERT INTO meta VALUES ('schema_version', '3')");
    future.close();
    const f = thrown(() => StudyStore.open(`${dir}/future.sqlite`));
    assert(f instanceof StoreError && f.reason === "newer-version", String(f));
    assert(f.message.includes("schema version 3, written by a newer spindrift"), f.message);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

// Damage as a failing disk or an interrupted copy leaves it: 4 KiB of random bytes over one page at 40 % of
// the file. SQLite's quick check (structure of every b-tree page and record) must catch it at the door.
Deno.test("a damaged study database is refused at the door by writers and readers, untouched, with the fix", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = `${dir}/film.sqlite`;
    writeStudyDb(path, 40);
    damagePage(path, 0.4);
    const before = fileHash(path);
    const w = thrown(() => StudyStore.open(path));
    assert(w instanceof StoreError && w.reason === "corrupt", String(w));
    assert(
      w.message.includes("is damaged") && w.message.includes("nothing was read from it or written"),
      w.message,
    );
    assert(w.hint?.includes(`spindrift salvage ${path} --out ${dir}/film-salvaged.sqlite`), w.hint);
    const r = thrown(() => openStoreReadOnly(path));
    assert(r instanceof StoreReadError && r.reason === "corrupt", String(r));
    assertEquals(fileHash(path), before, "the damaged file is left as it was");
    // (A WAL database read by SQLite gets its -wal and -shm companions; no lock file, no salvage file.)
    assertEquals(siblings(dir).filter((n) => !/-(wal|shm)$/.test(n)), ["film.sqlite"]);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
