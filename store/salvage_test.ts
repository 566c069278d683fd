import { DatabaseSync } from "node:sqlite";
import { createHash } from "node:crypto";
import { assert, assertEquals } from "../test/_assert.ts";
import { StudyStore } from "./db.ts";
import { salvageDatabase } from "./salvage.ts";
import { openStoreReadOnly, readStudy } from "./reads.ts";
import { damagePage, writeStudyDb } from "./_testing.ts";

/** Per realisation key: a digest of its row, scalars, series and frames (row ids left out). */
function contents(path: string): Map<string, string> {
  const db = new DatabaseSync(path, { readOnly: true });
  try {
    const out = new Map<string, string>();
    for (
      const r of db.prepare("SELECT id, realisation_key, idx, status, master_seed FROM realisations").all()
    ) {
      const h = createHash("sha256");
      h.update(JSON.stringify([r.idx, r.status, r.master_seed]));
      for (const t of ["scalars", "series", "frames"]) {
        for (
          const row of db.prepare(`SELECT * FROM ${t} WHERE realisation_id = ? ORDER BY 2, 3`).all(
            Number(r.id),
          )
        ) {
          const { realisation_id: _, ...rest } = row;
          h.update(JSON.stringify(Object.values(rest), (_k, v) => v instanceof Uint8Array ? [...v] : v));
        }
      }
      out.set(String(r.realisation_key), h.digest("hex"));
    }
    return out;
  } finally {
    db.close();
  }
}

Deno.test("salvageDatabase copies an undamaged database whole", () => {
  const dir = Deno.makeTempDirSync();
  try {
    writeStudyDb(`${dir}/a.sqlite`, 12);
    const r = salvageDatabase(`${dir}/a.sqlite`, `${dir}/b.sqlite`);
    assertEquals([r.done, r.failed, r.unfinished, r.unreadable.length, r.skippedRows], [12, 0, 0, 0, 0]);
    assertEquals(r.targetProblems, []);
    assertEquals(contents(`${dir}/b.sqlite`), contents(`${dir}/a.sqlite`));
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

// A page of the file destroyed (as a failing disk does): every realisation that can still be read whole is
// copied bit for bit into a new file that passes SQLite's integrity check and opens for every command.
Deno.test("salvageDatabase copies every readable realisation of a damaged database into a sound new file", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = `${dir}/film.sqlite`;
    writeStudyDb(path, 40);
    const original = contents(path);
    for (const [fraction, seed] of [[0.4, 1], [0.75, 2]] as const) damagePage(path, fraction, seed);
    assert(openFails(path), "the damaged file is refused at the door");
    const before = Deno.readFileSync(path);
    const r = salvageDatabase(path, `${dir}/film-salvaged.sqlite`);
    assertEquals(Deno.readFileSync(path), before, "the damaged file is only read");
    assertEquals(r.targetProblems, []);
    assertEquals(r.studies, 1);
    assert(r.done >= 30, `most realisations survive two lost pages (got ${r.done})`);
    assert(r.done + r.unreadable.length >= 38 || r.unreadable.some((u) => u.id === null), JSON.stringify(r));
    const salvaged = contents(`${dir}/film-salvaged.sqlite`);
    assertEquals(salvaged.size, r.done);
    for (const [key, digest] of salvaged) {
      assertEquals(digest, original.get(key), `realisation ${key} is intact`);
    }
    const db = openStoreReadOnly(`${dir}/film-salvaged.sqlite`);
    assertEquals(readStudy(db).name, "door");
    db.close();
    StudyStore.open(`${dir}/film-salvaged.sqlite`).close();
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

function openFails(path: string): boolean {
  try {
    openStoreReadOnly(path).close();
    return false;
  } catch {
    return true;
  }
}
