import { assert, assertEquals, assertThrows } from "../../test/_assert.ts";
import { loadNormalizedForTest } from "../../test/_study.ts";
import {
  defaultResultsDir,
  listShards,
  listSubmissions,
  loadSubmittedStudy,
  MANIFEST_FORMAT,
  newSubmissionId,
  readManifest,
  type SubmissionManifest,
  writeManifest,
} from "./submission.ts";
import { sha256Hex } from "../hash.ts";
import { CLUSTER_DEFAULTS } from "./slurm_schema.ts";
import { ExecutorError } from "./errors.ts";
import { SMALL_STUDY, studyInTempDir } from "./_testing.ts";
import { tempDir } from "../../test/_tmp.ts";

function manifestFor(over: Partial<SubmissionManifest> = {}): SubmissionManifest {
  return {
    format: MANIFEST_FORMAT,
    id: "20261201T101500Z",
    studyName: "x",
    studyHash: "ab".repeat(32),
    engine: { id: "point-vortex-2d", version: "1" },
    studyFile: "study-x.yaml",
    studyTextSha256: "cd".repeat(32),
    sourcePath: "/data/x.yaml",
    database: "/data/x.sqlite",
    toolVersion: "test",
    createdAt: "2026-12-01T10:15:00.000Z",
    resources: { ...CLUSTER_DEFAULTS, extraLines: [] },
    sliceSize: 1,
    slices: [[{ key: "ef".repeat(32), pointHash: "01".repeat(32), index: 0 }]],
    jobId: null,
    ...over,
  };
}

Deno.test("defaultResultsDir: '<database name>-cluster' beside the database", () => {
  assertEquals(defaultResultsDir("/data/film.sqlite"), "/data/film-cluster");
  assertEquals(defaultResultsDir("/data/film.v2.db"), "/data/film.v2-cluster");
  assertEquals(defaultResultsDir("/data/film"), "/data/film-cluster");
});

Deno.test("writeManifest/readManifest: round trip; a damaged or foreign manifest gets a clear message", () => {
  const dir = tempDir();
  const m = manifestFor({ jobId: "4711" });
  writeManifest(`${dir}/manifest.json`, m);
  assertEquals(readManifest(`${dir}/manifest.json`), m);
  Deno.writeTextFileSync(`${dir}/broken.json`, '{"format": 1, "id": ');
  assertThrows(() => readManifest(`${dir}/broken.json`), ExecutorError, "is not valid JSON");
  Deno.writeTextFileSync(`${dir}/old.json`, JSON.stringify({ ...m, format: 0 }));
  assertThrows(() => readManifest(`${dir}/old.json`), ExecutorError, "format: ");
  assertThrows(() => readManifest(`${dir}/none.json`), ExecutorError, "cannot read the submission manifest");
});

Deno.test("newSubmissionId: UTC time to the second, made unique within the folder", () => {
  const dir = tempDir();
  const t = new Date("2026-12-01T10:15:00.250Z");
  assertEquals(newSubmissionId(dir, t), "20261201T101500Z");
  Deno.mkdirSync(`${dir}/20261201T101500Z`);
  assertEquals(newSubmissionId(dir, t), "20261201T101500Z-2");
});

Deno.test("listSubmissions and listShards: submissions oldest first, shards in task order", () => {
  const dir = tempDir();
  for (const id of ["20261202T000000Z", "20261201T000000Z"]) {
    Deno.mkdirSync(`${dir}/${id}`);
    writeManifest(`${dir}/${id}/manifest.json`, manifestFor({ id }));
  }
  for (const t of [10, 2, 1]) {
    Deno.writeFileSync(`${dir}/20261201T000000Z/shard-7-${t}.sqlite`, new Uint8Array());
  }
  Deno.writeFileSync(`${dir}/20261202T000000Z/shard-9-0.sqlite`, new Uint8Array());
  Deno.mkdirSync(`${dir}/20261203T000000Z`);
  Deno.writeTextFileSync(`${dir}/20261203T000000Z/manifest.json`, "{}");
  const { manifests, problems } = listSubmissions(dir);
  assertEquals(manifests.map((m) => m.manifest.id), ["20261201T000000Z", "20261202T000000Z"]);
  assertEquals(problems.length, 1);
  assertEquals(listShards(dir).map((p) => p.slice(dir.length + 1)), [
    "20261201T000000Z/shard-7-1.sqlite",
    "20261201T000000Z/shard-7-2.sqlite",
    "20261201T000000Z/shard-7-10.sqlite",
    "20261202T000000Z/shard-9-0.sqlite",
  ]);
  assertEquals(listShards(`${dir}/absent`), []);
});

Deno.test("loadSubmittedStudy: the frozen copy gives the submitted study; an edited copy is refused", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  Deno.writeTextFileSync(`${dir}/copy.yaml`, SMALL_STUDY);
  const m = manifestFor({
    studyHash: study.hash,
    studyFile: "copy.yaml",
    studyTextSha256: sha256Hex(SMALL_STUDY),
    sourcePath: studyPath,
  });
  const loaded = loadSubmittedStudy(dir, m);
  assertEquals(loaded.hash, study.hash);
  assertEquals(loaded.sourcePath, studyPath, "relative paths keep resolving against the original folder");
  Deno.writeTextFileSync(`${dir}/copy.yaml`, SMALL_STUDY.replace("seed: 4242", "seed: 4243"));
  assertThrows(() => loadSubmittedStudy(dir, m), ExecutorError, "was changed after submission");
});

Deno.test("loadSubmittedStudy: a study whose hash changed (another engine version) is refused", async () => {
  const { dir, studyPath } = studyInTempDir();
  const study = await loadNormalizedForTest(studyPath);
  Deno.writeTextFileSync(`${dir}/copy.yaml`, SMALL_STUDY);
  const m = manifestFor({
    studyHash: "00".repeat(32),
    engine: { id: study.engine.id, version: "0.0.1" },
    studyFile: "copy.yaml",
    studyTextSha256: sha256Hex(SMALL_STUDY),
    sourcePath: studyPath,
  });
  const e = assertThrows(
    () => loadSubmittedStudy(dir, m),
    ExecutorError,
    "the code changed since submission",
  );
  assert(e.message.includes("0.0.1 then"), e.message);
});
