import assert from "node:assert/strict";
import { DatabaseSync } from "node:sqlite";
import {
  listStudies,
  openStoreReadOnly,
  readAlignedSeries,
  readEventCounts,
  readMeta,
  readRealisations,
  readScalars,
  readSeriesNames,
  readStudy,
  readStudyPoints,
  StoreReadError,
} from "./reads.ts";
import { SCHEMA_SQL, SCHEMA_VERSION } from "./schema.ts";

/** A database with two study revisions, one point, three realisations, written with plain SQL. */
function makeDb(dir: string): string {
  const path = `${dir}/study.sqlite`;
  const db = new DatabaseSync(path);
  db.exec("PRAGMA synchronous = OFF"); // a throw-away test file: no need to wait for the disk
  db.exec(SCHEMA_SQL);
  db.exec(`
    BEGIN;
    INSERT INTO meta VALUES ('schema_version', '${SCHEMA_VERSION}'), ('created_by', 'test');
    INSERT INTO studies (id, name, description, study_hash, source_path, text, normalized_json, engine_id,
      engine_version, tool_version, deno_version, git_commit, created_at, last_run_at) VALUES
      (1, 'old', 'first', 'h1', NULL, 'name: old', '{"realisations":2}', 'e', '1', '0.1', '2.9.6', NULL,
       '2026-01-01T00:00:00Z', NULL),
      (2, 'new', 'second', 'h2', 'new.yaml', 'name: new', '{"realisations":3,"seed":"7"}', 'e', '1', '0.1',
       '2.9.6', 'abc', '2026-01-02T00:00:00Z', '2026-01-02T01:00:00Z');
    INSERT INTO points VALUES ('P', 'PH', 'e', '1', '{"n":4}', '{"run":{"duration":1}}', '2026-01-01T00:00:00Z',
      '{}');
    INSERT INTO study_points VALUES (1, 0, 'P', 'base', '{}'), (2, 0, 'P', 'n=4', '{"n":4}');
    INSERT INTO realisations (id, realisation_key, point_hash, idx, seed, status, failure_kind, error, engine_id,
      engine_version, started_at, finished_at, wall_seconds, sim_time_reached, frame_count, host) VALUES
      (10, 'k2', 'P', 2, 's2', 'failed', 'nan', 'NaN at t=0.5', 'e', '1', 'a', 'b', 0.5, 0.5, 2, 'h'),
      (11, 'k0', 'P', 0, 's0', 'done', NULL, NULL, 'e', '1', 'a', 'b', 1.5, 1, 3, 'h'),
      (12, 'k1', 'P', 1, 's1', 'done', NULL, NULL, 'e', '1', 'a', 'b', 2.5, 1, 3, 'h');
    INSERT INTO scalars VALUES (11, 'drift.hamiltonian', 1e-9), (11, 'steps', 100), (12, 'steps', 120),
      (12, 'drift.hamiltonian', NULL);
    -- realisation 11 has frames 0,1,2; realisation 12 lacks frame 1 and has a NULL at frame 2, and a time that
    -- differs by 1e-12 at frame 0.
    INSERT INTO series VALUES (11, 'msd', 0, 0, 0), (11, 'msd', 1, 0.5, 1.25), (11, 'msd', 2, 1, 2.5),
      (12, 'msd', 0, 1e-12, 0), (12, 'msd', 2, 1, NULL), (12, 'msd', 3, 1.5, 4),
      (11, 'cluster_rms_radius', 0, 0, 3), (12, 'diag.h', 0, 0, -1);
    INSERT INTO events VALUES (11, 0, 0.1, 'annihilation', '[1,2]', '{}'), (11, 1, 0.2, 'annihilation', '[3,4]', '{}'),
      (11, 2, 0.3, 'evaporation', '[5]', '{}'), (12, 0, 0.4, 'evaporation', '[6]', '{}');
    COMMIT;
  `);
  db.close();
  return path;
}

Deno.test("openStoreReadOnly explains a missing file, an empty file, a non-SQLite file and a foreign database", () => {
  const dir = Deno.makeTempDirSync();
  try {
    assert.throws(() => openStoreReadOnly(`${dir}/nope.sqlite`), (e) => {
      assert.ok(e instanceof StoreReadError);
      assert.match(e.message, /database file not found: .*nope\.sqlite/);
      return true;
    });
    Deno.writeTextFileSync(`${dir}/empty.sqlite`, "");
    assert.throws(() => openStoreReadOnly(`${dir}/empty.sqlite`), /is empty, not a spindrift database/);
    Deno.writeTextFileSync(`${dir}/junk.sqlite`, "not a database at all ".repeat(200));
    assert.throws(
      () => openStoreReadOnly(`${dir}/junk.sqlite`),
      /is not an SQLite database file/,
    );
    const other = new DatabaseSync(`${dir}/other.sqlite`);
    other.exec("CREATE TABLE t (x)");
    other.close();
    assert.throws(
      () => openStoreReadOnly(`${dir}/other.sqlite`),
      /SQLite file but not a spindrift study database .*left unchanged/,
    );
    const future = new DatabaseSync(`${dir}/future.sqlite`);
    future.exec(
      `CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT); INSERT INTO meta VALUES ('schema_version', '99')`,
    );
    future.close();
    assert.throws(
      () => openStoreReadOnly(`${dir}/future.sqlite`),
      /schema version 99, written by a newer spindrift/,
    );
    assert.throws(() => openStoreReadOnly(dir), /not a database file/);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("openStoreReadOnly gives a connection that refuses writes", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const db = openStoreReadOnly(makeDb(dir));
    assert.throws(() => db.exec("DELETE FROM scalars"), /readonly/);
    db.close();
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("readStudy returns the latest revision by default and a given id on request", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const db = openStoreReadOnly(makeDb(dir));
    assert.deepEqual(readMeta(db), { created_by: "test", schema_version: String(SCHEMA_VERSION) });
    assert.deepEqual(listStudies(db).map((s) => s.id), [1, 2]);
    const latest = readStudy(db);
    assert.equal(latest.id, 2);
    assert.equal(latest.name, "new");
    assert.equal(latest.sourcePath, "new.yaml");
    assert.equal(latest.gitCommit, "abc");
    assert.deepEqual(latest.normalized, { realisations: 3, seed: "7" });
    const first = readStudy(db, { studyId: 1 });
    assert.equal(first.name, "old");
    assert.equal(first.gitCommit, null);
    assert.equal(first.lastRunAt, null);
    assert.throws(() => readStudy(db, { studyId: 5 }), /no study with id 5; the database has ids 1, 2/);
    db.close();
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("readStudyPoints and readRealisations return the rows in order with parsed JSON", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const db = openStoreReadOnly(makeDb(dir));
    const [p] = readStudyPoints(db, 2);
    assert.equal(p.label, "n=4");
    assert.deepEqual(p.varied, { n: 4 });
    assert.deepEqual(p.params, { n: 4 });
    assert.deepEqual(p.controls, { run: { duration: 1 } });
    assert.equal(p.paramsHash, "PH");
    const runs = readRealisations(db, "P", { seed: null });
    assert.deepEqual(runs.map((r) => [r.index, r.id, r.status]), [[0, 11, "done"], [1, 12, "done"], [
      2,
      10,
      "failed",
    ]]);
    assert.equal(runs[2].failureKind, "nan");
    assert.equal(runs[2].error, "NaN at t=0.5");
    assert.equal(runs[0].wallSeconds, 1.5);
    assert.equal(runs[0].error, null);
    db.close();
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("readScalars reads NULL as NaN and readEventCounts counts by kind", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const db = openStoreReadOnly(makeDb(dir));
    const s = readScalars(db, [11, 12, 10]);
    assert.deepEqual(s.get(11), { "drift.hamiltonian": 1e-9, steps: 100 });
    assert.ok(Number.isNaN(s.get(12)!["drift.hamiltonian"]));
    assert.deepEqual(s.get(10), {});
    const ev = readEventCounts(db, [11, 12]);
    assert.deepEqual(ev.get(11), { annihilation: 2, evaporation: 1 });
    assert.deepEqual(ev.get(12), { evaporation: 1 });
    db.close();
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("readAlignedSeries aligns frames by k, fills gaps and NULLs with NaN and reports the time spread", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const db = openStoreReadOnly(makeDb(dir));
    assert.deepEqual(readSeriesNames(db, [11, 12]), ["cluster_rms_radius", "diag.h", "msd"]);
    assert.deepEqual(readSeriesNames(db, []), []);
    const a = readAlignedSeries(db, [11, 12], "msd");
    assert.deepEqual([...a.k], [0, 1, 2, 3]);
    assert.deepEqual([...a.t], [0, 0.5, 1, 1.5]);
    assert.equal(a.tSpread, 1e-12);
    assert.deepEqual([...a.values[0]], [0, 1.25, 2.5, Number.NaN]);
    assert.deepEqual([...a.values[1]], [0, Number.NaN, Number.NaN, 4]);
    const none = readAlignedSeries(db, [11], "nothing");
    assert.equal(none.k.length, 0);
    assert.equal(none.values[0].length, 0);
    db.close();
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
