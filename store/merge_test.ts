import { DatabaseSync } from "node:sqlite";
import { createHash } from "node:crypto";
import { assert, assertEquals } from "../test/_assert.ts";
import { StudyStore } from "./db.ts";
import { mergeShard, ShardRejected } from "./merge.ts";
import { tempDir } from "../test/_tmp.ts";

const ENGINE = { engineId: "toy-2d", engineVersion: "1.0.0" };
const STUDY_HASH = "aa".repeat(32);
const POINTS = ["p0".padEnd(64, "0"), "p1".padEnd(64, "1")].map((h) => h.replace(/[^0-9a-f]/g, "a"));

interface FakeRealisation {
  readonly key: string;
  readonly point: number;
  readonly idx: number;
  readonly status: "done" | "failed" | "running";
  /** Different values give different data, so copies can be told apart. */
  readonly value: number;
}

function key(point: number, idx: number): string {
  return createHash("sha256").update(`${point}/${idx}`).digest("hex");
}

/** Writes a shard (or a study database) through the same StudyStore calls the runner uses. */
function writeDb(
  path: string,
  realisations: readonly FakeRealisation[],
  opts: { studyHash?: string; engineVersion?: string } = {},
): void {
  const store = StudyStore.open(path);
  try {
    const engineVersion = opts.engineVersion ?? ENGINE.engineVersion;
    store.recordStudy(
      {
        name: "toy",
        description: "toy",
        studyHash: opts.studyHash ?? STUDY_HASH,
        sourcePath: null,
        text: "name: toy",
        normalizedJson: '{"realisations":3}',
        engineId: ENGINE.engineId,
        engineVersion,
        toolVersion: "test",
        denoVersion: "test",
        gitCommit: null,
      },
      POINTS.map((h, i) => ({
        pointIndex: i,
        pointHash: h,
        paramsHash: h,
        label: `p=${i}`,
        variedJson: "{}",
        paramsJson: "{}",
        controlsJson: "{}",
      })),
    );
    for (const r of realisations) {
      const id = store.beginRealisation({
        key: r.key,
        pointHash: POINTS[r.point],
        index: r.idx,
        masterSeed: "1",
        seedHex: "0".repeat(32),
        engineId: ENGINE.engineId,
        engineVersion,
        host: "node1",
      });
      const data = new Uint8Array(new Float64Array([r.value, r.value * 2, Number.MIN_VALUE]).buffer);
      store.appendFrames(id, [{ k: 0, t: 0, n: 1, layout: "x:f64,y:f64,z:f64", data }]);
      if (r.status === "running") continue;
      store.finishRealisation(id, {
        status: r.status,
        failureKind: r.status === "failed" ? "blow-up" : undefined,
        error: r.status === "failed" ? "too far" : undefined,
        wallSeconds: 1,
        simTimeReached: 0.5,
        scalars: { steps: r.value, nan_one: Number.NaN },
        series: { msd: { t: [0, 0.1], v: [0, r.value] } },
        events: [{ t: 0.05, kind: "evaporation", ids: [1, 2], data: { d: r.value } }],
      });
    }
  } finally {
    store.close();
  }
}

/** Everything about the realisations, keyed by realisation key (row ids differ between files). */
function digest(path: string): string {
  const db = new DatabaseSync(path, { readOnly: true });
  try {
    const rs = db.prepare(
      "SELECT id, realisation_key, point_hash, idx, status, failure_kind, error, seed, frame_count, host " +
        "FROM realisations ORDER BY realisation_key",
    ).all() as Record<string, unknown>[];
    return JSON.stringify(rs.map((r) => {
      const id = Number(r.id);
      const q = (sql: string) =>
        (db.prepare(sql).all(id) as Record<string, unknown>[]).map((x) =>
          Object.values(x).map((v) => v instanceof Uint8Array ? [...v].join(",") : v)
        );
      return [
        { ...r, id: undefined },
        q("SELECT name, value FROM scalars WHERE realisation_id = ? ORDER BY name"),
        q("SELECT name, k, t, value FROM series WHERE realisation_id = ? ORDER BY name, k"),
        q("SELECT seq, t, kind, ids_json, data_json FROM events WHERE realisation_id = ? ORDER BY seq"),
        q("SELECT k, t, n, layout, data FROM frames WHERE realisation_id = ? ORDER BY k"),
      ];
    }));
  } finally {
    db.close();
  }
}

function fileHash(path: string): string {
  return createHash("sha256").update(Deno.readFileSync(path)).digest("hex");
}

function tmp(): string {
  return tempDir("spindrift-merge-");
}

const EXPECT = { studyHash: STUDY_HASH, ...ENGINE };

function finished(
  point: number,
  idx: number,
  value: number,
  status: "done" | "failed" = "done",
): FakeRealisation {
  return { key: key(point, idx), point, idx, status, value };
}

async function mergeInto(mainPath: string, shard: string) {
  const store = StudyStore.open(mainPath);
  try {
    return await mergeShard(store, shard, EXPECT);
  } finally {
    store.close();
  }
}

Deno.test("mergeShard: copies every finished realisation exactly (frames, series, scalars, events)", async () => {
  const d = tmp();
  const all = [finished(0, 0, 1.5), finished(0, 1, 2.5), finished(1, 0, 3.5, "failed")];
  writeDb(`${d}/shard.sqlite`, all);
  writeDb(`${d}/reference.sqlite`, all); // written directly: what the merged database must hold
  const r = await mergeInto(`${d}/main.sqlite`, `${d}/shard.sqlite`);
  assertEquals([r.added, r.replaced, r.alreadyStored, r.unfinished], [3, 0, 0, 0]);
  assertEquals(digest(`${d}/main.sqlite`), digest(`${d}/reference.sqlite`));
  const db = new DatabaseSync(`${d}/main.sqlite`, { readOnly: true });
  const points = db.prepare("SELECT COUNT(*) AS n FROM study_points").get() as { n: number };
  db.close();
  assertEquals(points.n, 2, "the study and its points come along");
});

Deno.test("mergeShard: merging again adds nothing and changes nothing (idempotent)", async () => {
  const d = tmp();
  writeDb(`${d}/shard.sqlite`, [finished(0, 0, 1), finished(0, 1, 2), finished(1, 2, 3)]);
  await mergeInto(`${d}/main.sqlite`, `${d}/shard.sqlite`);
  const before = digest(`${d}/main.sqlite`);
  const again = await mergeInto(`${d}/main.sqlite`, `${d}/shard.sqlite`);
  assertEquals([again.added, again.replaced, again.alreadyStored], [0, 0, 3]);
  assertEquals(digest(`${d}/main.sqlite`), before);
});

Deno.test("mergeShard: the order of shards does not matter", async () => {
  const d = tmp();
  writeDb(`${d}/a.sqlite`, [finished(0, 0, 1), finished(1, 0, 2)]);
  writeDb(`${d}/b.sqlite`, [finished(0, 1, 3), finished(1, 1, 4)]);
  await mergeInto(`${d}/ab.sqlite`, `${d}/a.sqlite`);
  await mergeInto(`${d}/ab.sqlite`, `${d}/b.sqlite`);
  await mergeInto(`${d}/ba.sqlite`, `${d}/b.sqlite`);
  await mergeInto(`${d}/ba.sqlite`, `${d}/a.sqlite`);
  assertEquals(digest(`${d}/ab.sqlite`), digest(`${d}/ba.sqlite`));
});

Deno.test("mergeShard: a done realisation replaces a stored failure or unfinished row, never a done one", async () => {
  const d = tmp();
  const killed: FakeRealisation = { key: key(1, 0), point: 1, idx: 0, status: "running", value: 5 };
  writeDb(`${d}/main.sqlite`, [finished(0, 0, 1, "failed"), finished(0, 1, 2), killed]);
  writeDb(`${d}/shard.sqlite`, [finished(0, 0, 10), finished(0, 1, 20, "failed"), finished(1, 0, 30)]);
  const r = await mergeInto(`${d}/main.sqlite`, `${d}/shard.sqlite`);
  assertEquals([r.added, r.replaced, r.alreadyStored], [0, 2, 1]);
  writeDb(`${d}/expected.sqlite`, [finished(0, 0, 10), finished(0, 1, 2), finished(1, 0, 30)]);
  assertEquals(digest(`${d}/main.sqlite`), digest(`${d}/expected.sqlite`));
});

Deno.test("mergeShard: realisations still running in the shard are left out (they count as missing)", async () => {
  const d = tmp();
  writeDb(`${d}/shard.sqlite`, [finished(0, 0, 1), {
    key: key(0, 1),
    point: 0,
    idx: 1,
    status: "running",
    value: 2,
  }]);
  const r = await mergeInto(`${d}/main.sqlite`, `${d}/shard.sqlite`);
  assertEquals([r.added, r.unfinished], [1, 1]);
  const db = new DatabaseSync(`${d}/main.sqlite`, { readOnly: true });
  const rows = db.prepare("SELECT status, (SELECT COUNT(*) FROM pending_frames) AS pending FROM realisations")
    .all();
  db.close();
  assertEquals(rows.map((r) => ({ ...r })), [{ status: "done", pending: 0 }]);
});

Deno.test("mergeShard: a shard of another study is refused and the database is not touched", async () => {
  const d = tmp();
  writeDb(`${d}/main.sqlite`, [finished(0, 0, 1)]);
  writeDb(`${d}/other.sqlite`, [finished(0, 1, 2)], { studyHash: "bb".repeat(32) });
  const before = fileHash(`${d}/main.sqlite`);
  let error: unknown;
  try {
    await mergeInto(`${d}/main.sqlite`, `${d}/other.sqlite`);
  } catch (e) {
    error = e;
  }
  assert(error instanceof ShardRejected, String(error));
  assertEquals(error.problem, "other-study");
  assert(error.message.includes("belongs to study hash bbbbbbbbbbbb"), error.message);
  assertEquals(fileHash(`${d}/main.sqlite`), before, "database file unchanged byte for byte");
});

Deno.test("mergeShard: a shard of another engine version is refused", async () => {
  const d = tmp();
  writeDb(`${d}/v2.sqlite`, [finished(0, 0, 1)], { engineVersion: "2.0.0" });
  let error: unknown;
  try {
    await mergeInto(`${d}/main.sqlite`, `${d}/v2.sqlite`);
  } catch (e) {
    error = e;
  }
  assert(error instanceof ShardRejected && error.problem === "engine-version", String(error));
  assert(error.message.includes("toy-2d 2.0.0"), error.message);
});

Deno.test("mergeShard: a truncated shard is rejected without touching the database", async () => {
  const d = tmp();
  writeDb(`${d}/main.sqlite`, [finished(0, 0, 1)]);
  // Enough realisations that the file spans many pages, then cut it in the middle of a page.
  writeDb(`${d}/shard.sqlite`, Array.from({ length: 40 }, (_, i) => finished(1, i, i + 0.25)));
  const size = Deno.statSync(`${d}/shard.sqlite`).size;
  const f = Deno.openSync(`${d}/shard.sqlite`, { write: true });
  f.truncateSync(Math.floor(size * 0.6) + 123);
  f.close();
  const before = fileHash(`${d}/main.sqlite`);
  const digestBefore = digest(`${d}/main.sqlite`);
  let error: unknown;
  try {
    await mergeInto(`${d}/main.sqlite`, `${d}/shard.sqlite`);
  } catch (e) {
    error = e;
  }
  assert(error instanceof ShardRejected, String(error));
  assertEquals(error.problem, "corrupt");
  assert(/damaged or truncated|integrity/.test(error.message), error.message);
  assertEquals(fileHash(`${d}/main.sqlite`), before, "database file unchanged byte for byte");
  assertEquals(digest(`${d}/main.sqlite`), digestBefore);
});

Deno.test("mergeShard: files that are not shards are refused with the reason", async () => {
  const d = tmp();
  Deno.writeTextFileSync(`${d}/text.sqlite`, "not a database at all, just text ".repeat(200));
  const other = new DatabaseSync(`${d}/foreign.sqlite`);
  other.exec("CREATE TABLE t (x)");
  other.close();
  for (const [file, problem] of [["text", "corrupt"], ["foreign", "not-a-shard"], ["absent", "unreadable"]]) {
    let error: unknown;
    try {
      await mergeInto(`${d}/main.sqlite`, `${d}/${file}.sqlite`);
    } catch (e) {
      error = e;
    }
    assert(error instanceof ShardRejected, `${file}: ${error}`);
    assertEquals(error.problem, problem, `${file}: ${error.message}`);
  }
});

Deno.test("mergeShard: a shard with a newer schema version is refused", async () => {
  const d = tmp();
  writeDb(`${d}/shard.sqlite`, [finished(0, 0, 1)]);
  const db = new DatabaseSync(`${d}/shard.sqlite`);
  db.exec("UPDATE meta SET value = '99' WHERE key = 'schema_version'");
  db.close();
  let error: unknown;
  try {
    await mergeInto(`${d}/main.sqlite`, `${d}/shard.sqlite`);
  } catch (e) {
    error = e;
  }
  assert(error instanceof ShardRejected && error.problem === "schema-version", String(error));
});
