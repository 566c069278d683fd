import { assert, assertEquals } from "../test/_assert.ts";
import { StudyStore } from "./db.ts";
import {
  countEnsembleResults,
  PartialResultsError,
  readEnsembleResults,
  replaceEnsembleResults,
} from "./ensemble.ts";
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
    // A skipped analysis (a row with another status and no value) replaces a stored value.
    replaceEnsembleResults(store, studyId, [
      row("msd-fit", "D", 10),
      row("msd-fit", "tau_c", 20),
      { pointHash: "pa", analysis: "vinen", name: "D", value: null, detail: { status: "not-available" } },
    ]);
    let all = readEnsembleResults(store.db, studyId);
    assertEquals(all.map((r) => [r.analysis, r.name, r.value]), [
      ["msd-fit", "D", 10],
      ["msd-fit", "tau_c", 20],
      ["vinen", "D", null],
    ]);
    replaceEnsembleResults(store, studyId, [row("vinen", "D", 30)], { analyses: ["vinen"] });
    all = readEnsembleResults(store.db, studyId);
    assertEquals(all.map((r) => [r.analysis, r.name, r.value]), [
      ["msd-fit", "D", 10],
      ["msd-fit", "tau_c", 20],
      ["vinen", "D", 30],
    ]);
    assert(
      readEnsembleResults(store.db, studyId, { analysis: "vinen" }).every((r) => r.analysis === "vinen"),
    );
  } finally {
    store.close();
    Deno.removeSync(dir, { recursive: true });
  }
});

// The guard of issue "never replace good results with partial ones": a rerun in which an analysis failed (an
// error row without value) or left a stored value out writes nothing. Common practice, no source.
Deno.test("replaceEnsembleResults: stored values are never replaced by errors or dropped; nothing is written", () => {
  const dir = Deno.makeTempDirSync();
  const { store, studyId } = freshStore(dir);
  try {
    const good = [
      { pointHash: "pa", analysis: "msd-fit", name: "D", value: 1 },
      { pointHash: "pa", analysis: "msd-fit", name: "tau_c", value: 2 },
      { pointHash: "pb", analysis: "msd-fit", name: "D", value: 3 },
    ];
    replaceEnsembleResults(store, studyId, good, { computedAt: "2026-01-01T00:00:00Z" });
    const partial = [
      {
        pointHash: "pa",
        analysis: "msd-fit",
        name: "D",
        value: null,
        detail: { status: "error", reason: "database disk image is malformed" },
      },
      { pointHash: "pb", analysis: "msd-fit", name: "D", value: 3.5 },
    ];
    let error: unknown;
    try {
      replaceEnsembleResults(store, studyId, partial);
    } catch (e) {
      error = e;
    }
    assert(error instanceof PartialResultsError, String(error));
    assertEquals(error.lost.length, 2);
    assert(
      error.lost.some((l) => l.includes("msd-fit/D at point pa") && l.includes("malformed")),
      error.message,
    );
    assert(error.lost.some((l) => l.includes("msd-fit/tau_c at point pa: not computed")), error.message);
    const after = readEnsembleResults(store.db, studyId);
    assertEquals(after.map((r) => [r.pointHash, r.name, r.value]), [["pa", "D", 1], ["pa", "tau_c", 2], [
      "pb",
      "D",
      3,
    ]]);
    assert(after.every((r) => r.computedAt === "2026-01-01T00:00:00Z"));
  } finally {
    store.close();
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("replaceEnsembleResults: `whole` replaces one command's rows even where the new run has no value", () => {
  const dir = Deno.makeTempDirSync();
  const { store, studyId } = freshStore(dir);
  try {
    replaceEnsembleResults(store, studyId, [{ pointHash: "pa", analysis: "audit", name: "a/x", value: 1 }], {
      analyses: ["audit"],
    });
    let refused = false;
    try {
      replaceEnsembleResults(store, studyId, [], { analyses: ["audit"] });
    } catch (e) {
      refused = e instanceof PartialResultsError;
    }
    assert(refused, "without `whole` dropping a stored value is refused");
    replaceEnsembleResults(store, studyId, [{ pointHash: "pa", analysis: "audit", name: "b/x", value: 2 }], {
      analyses: ["audit"],
      whole: true,
    });
    assertEquals(readEnsembleResults(store.db, studyId, { analysis: "audit" }).map((r) => r.name), ["b/x"]);
  } finally {
    store.close();
    Deno.removeSync(dir, { recursive: true });
  }
});
