import { DatabaseSync } from "node:sqlite";
import { createHash } from "node:crypto";
import { assert, assertEquals } from "../test/_assert.ts";
import { StudyStore } from "./db.ts";
import { realisationKey } from "./keys.ts";
import { openStoreReadOnly, readRealisations, readStudy, readStudyPoints } from "./reads.ts";
import { SCHEMA_V1_SQL } from "./_schema_v1_fixture.ts";

const P = "ab".repeat(32);

/**
 * A database as the version-1 build wrote it: two revisions of study "film" (seed 7, then the seed edited to
 * 8 and rerun for indices 0 and 1, so index 2 is still seed 7's), plus one row no recorded seed explains.
 */
function writeV1(path: string): void {
  const db = new DatabaseSync(path);
  db.exec("PRAGMA journal_mode = WAL");
  db.exec(SCHEMA_V1_SQL);
  const study = db.prepare(
    `INSERT INTO studies (name, description, study_hash, source_path, text, normalized_json, engine_id,
       engine_version, tool_version, deno_version, git_commit, created_at, last_run_at)
     VALUES ('film', 'd', ?, NULL, 'name: film', ?, 'e', '1', '0', '2', NULL, ?, ?)`,
  );
  study.run("h7", '{"realisations":3,"seed":"7"}', "2026-01-01T00:00:00Z", "2026-01-01T00:00:00Z");
  study.run("h8", '{"realisations":3,"seed":"8"}', "2026-01-02T00:00:00Z", "2026-01-02T00:00:00Z");
  db.exec(`
    INSERT INTO meta VALUES ('schema_version', '1');
    INSERT INTO points VALUES ('${P}', 'q', 'e', '1', '{}', '{}', '2026-01-01T00:00:00Z');
    INSERT INTO study_points VALUES (1, 0, '${P}', 'base', '{}'), (2, 0, '${P}', 'base', '{}');
  `);
  const rows: [number, string, string][] = [
    [0, realisationKey(P, 0, "8"), "done"],
    [1, realisationKey(P, 1, "8"), "done"],
    [2, realisationKey(P, 2, "7"), "failed"],
    [3, "f".repeat(64), "done"],
  ];
  const ins = db.prepare(
    `INSERT INTO realisations (realisation_key, point_hash, idx, seed, status, engine_id, engine_version)
     VALUES (?, ?, ?, 's', ?, 'e', '1')`,
  );
  for (const [idx, key, status] of rows) {
    const id = Number(ins.run(key, P, idx, status).lastInsertRowid);
    db.prepare("INSERT INTO scalars VALUES (?, 'steps', ?)").run(id, 10 * idx);
    db.prepare("INSERT INTO series VALUES (?, 'msd', 0, 0, ?)").run(id, idx);
    db.prepare("INSERT INTO frames VALUES (?, 0, 0, 1, 'x:f64', ?)").run(id, new Uint8Array(8).fill(idx));
  }
  db.close();
}

function fileHash(path: string): string {
  return createHash("sha256").update(Deno.readFileSync(path)).digest("hex");
}

Deno.test("a version-1 database reads unchanged read-only and is upgraded in place by the first writer", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = `${dir}/v1.sqlite`;
    writeV1(path);
    const before = fileHash(path);

    // Readers see it as version 1 saw it (every row counts for every seed) and write nothing.
    const ro = openStoreReadOnly(path);
    const study = readStudy(ro);
    assertEquals(study.seed, "8");
    assertEquals(readRealisations(ro, P, { seed: "8" }).map((r) => r.index), [0, 1, 2, 3]);
    assertEquals(readStudyPoints(ro, study.id)[0].inputs, {});
    ro.close();
    assertEquals(fileHash(path), before, "a read-only open leaves the file byte for byte");

    const store = StudyStore.open(path);
    try {
      assert(
        store.notes.some((n) =>
          /upgraded .* from database schema version 1 to 2 \(4 realisations kept\)/.test(n)
        ),
      );
      assert(store.notes.some((n) => n.includes("1 realisation(s) match no recorded study seed")));
      const db = store.db;
      const meta = Object.fromEntries(
        db.prepare("SELECT key, value FROM meta").all().map((r) => [String(r.key), String(r.value)]),
      );
      assertEquals([meta.schema_version, meta.study_name, meta.migrated_from], ["2", "film", "1"]);
      const seeds = db.prepare("SELECT idx, master_seed FROM realisations ORDER BY idx").all().map((r) => [
        r.idx,
        r.master_seed,
      ]);
      assertEquals(seeds, [[0, "8"], [1, "8"], [2, "7"], [3, null]]);
      // Children stay attached to their realisations (ids unchanged), foreign keys and structure intact.
      const joined = db.prepare(
        `SELECT r.idx, s.value AS steps, length(f.data) AS bytes FROM realisations r
         JOIN scalars s ON s.realisation_id = r.id JOIN frames f ON f.realisation_id = r.id ORDER BY r.idx`,
      ).all().map((r) => [r.idx, r.steps, r.bytes]);
      assertEquals(joined, [[0, 0, 8], [1, 10, 8], [2, 20, 8], [3, 30, 8]]);
      assertEquals(db.prepare("PRAGMA foreign_key_check").all().length, 0);
      assertEquals(String(Object.values(db.prepare("PRAGMA integrity_check").get()!)[0]), "ok");
      // The same point and index under another seed is a new row now (version 1 allowed one per index).
      store.beginRealisation({
        key: realisationKey(P, 0, "7"),
        pointHash: P,
        index: 0,
        masterSeed: "7",
        seedHex: "0",
        engineId: "e",
        engineVersion: "1",
        host: "h",
      });
      assertEquals(db.prepare("SELECT COUNT(*) AS n FROM realisations WHERE idx = 0").get()!.n, 2);
    } finally {
      store.close();
    }
    const after = openStoreReadOnly(path);
    assertEquals(readRealisations(after, P, { seed: "8" }).map((r) => r.index), [0, 1, 3]);
    assertEquals(readRealisations(after, P, { seed: "7" }).map((r) => [r.index, r.status]), [
      [0, "running"],
      [2, "failed"],
      [3, "done"],
    ]);
    after.close();
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
