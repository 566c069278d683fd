import { assert, assertEquals } from "../test/_assert.ts";
import { StudyStore } from "./db.ts";
import { countEnsembleResults, readEnsembleResults, replaceEnsembleResults } from "./ensemble.ts";
import { openStoreReadOnly } from "./reads.ts";

function freshStore(dir: string): { store: StudyStore; studyId: number } {
  const store = StudyStore.open(`${dir}/s.sqlite`);
  const studyId = store.recordStudy(
    {
      name: "s",
      description: "d",
      studyHash: "h1",
      sourcePath: null,
      text: "name: s",
      normalizedJson: "{}",
      engineId: "e",
      engineVersion: "1",
      toolVersion: "t",
      denoVersion: "d",
      gitCommit: null,
    },
    ["pa", "pb"].map((h, i) => ({
      pointIndex: i,
      pointHash: h,
      paramsHash: h,
      label: `p${i}`,
      variedJson: "{}",
      paramsJson: "{}",
      controlsJson: "{}",
    })),
  );
  return { store, studyId };
}

// Storage contract of spindrift's own schema (store/schema.ts); common practice, no source.
Deno.test("replaceEnsembleResults: rows read back in sweep order, NaN/∞ as NULL, detail JSON kept", () => {
  const dir = Deno.makeTempDirSync();
  const { store, studyId } = freshStore(dir);
  try {
    replaceEnsembleResults(store, studyId, [
      {
        pointHash: "pb",
        analysis: "msd-fit",
        name: "D",
        value: 0.5,
        lower: 0.4,
        upper: 0.6,
        detail: { B: 9 },
      },
      {
        pointHash: "pa",
        analysis: "msd-fit",
        name: "D",
        value: Number.NaN,
        detail: { status: "x", v: [1, NaN] },
      },
      { pointHash: "pa", analysis: "msd-fit", name: "tau_c", value: Infinity },
    ], { computedAt: "2026-01-01T00:00:00Z" });
  } finally {
    store.close();
  }
  const db = openStoreReadOnly(`${dir}/s.sqlite`);
  try {
    const rows = readEnsembleResults(db, studyId);
    assertEquals(rows.map((r) => `${r.pointHash}/${r.name}`), ["pa/D", "pa/tau_c", "pb/D"]);
    assertEquals(rows[0].value, null);
    assertEquals(rows[0].detail, { status: "x", v: [1, null] });
    assertEquals(rows[1].value, null);
    assertEquals([rows[2].value, rows[2].lower, rows[2].upper], [0.5, 0.4, 0.6]);
    assertEquals(rows[2].computedAt, "2026-01-01T00:00:00Z");
    assertEquals(readEnsembleResults(db, studyId, { pointHash: "pb" }).length, 1);
    assertEquals(countEnsembleResults(db, studyId), 3);
    assertEquals(countEnsembleResults(db, studyId + 1), 0);
  } finally {
    db.close();
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("replaceEnsembleResults: a rerun replaces the study's rows; `analyses` limits what is replaced", () => {
  const dir = Deno.makeTempDirSync();
  const { store, studyId } = freshStore(dir);
  try {
    const row = (analysis: string, name: string, value: number) => ({
      pointHash: "pa",
      analysis,
      name,
      value,
    });
    replaceEnsembleResults(store, studyId, [
      row("msd-fit", "D", 1),
      row("msd-fit", "tau_c", 2),
      row("vinen", "D", 3),
    ]);
    replaceEnsembleResults(store, studyId, [row("msd-fit", "D", 10)]);
    let all = readEnsembleResults(store.db, studyId);
    assertEquals(all.map((r) => [r.analysis, r.name, r.value]), [["msd-fit", "D", 10]]);
    replaceEnsembleResults(store, studyId, [row("vinen", "D", 30)], { analyses: ["vinen"] });
    all = readEnsembleResults(store.db, studyId);
    assertEquals(all.map((r) => [r.analysis, r.name, r.value]), [["msd-fit", "D", 10], ["vinen", "D", 30]]);
    assert(
      readEnsembleResults(store.db, studyId, { analysis: "vinen" }).every((r) => r.analysis === "vinen"),
    );
  } finally {
    store.close();
    Deno.removeSync(dir, { recursive: true });
  }
});
