import { assert, assertEquals } from "../test/_assert.ts";
import { estimateStudy, judgeEstimate, PreflightRefused, type Resources } from "./preflight.ts";
import { normalizeText, REPO, runForTest } from "../test/_study.ts";
import { loadNormalizedForTest } from "../test/_study.ts";

const GiB = 1024 ** 3;
const plenty: Resources = { freeDiskBytes: 1000 * GiB, availableMemoryBytes: 64 * GiB, unknown: [] };

function study(run: string, extra = "", count = 24): string {
  return `
name: preflight
description: pre-flight sizes
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: ${count}, polarity: 0, shape: uniform-disk, radius: 1.0 }
${extra}
seed: 3
run: ${run}
`;
}

// Counts the pre-flight rests on (spindrift's own conventions, study/preflight.ts); common practice, no source.
Deno.test("estimateStudy counts points, realisations, frames and objects from the study alone", async () => {
  const s = await loadNormalizedForTest(`${REPO}examples/film-patch.yaml`);
  const e = estimateStudy(s, { workers: 2 });
  assertEquals([e.points, e.realisationsPerPoint, e.total, e.toRun], [2, 64, 128, 128]);
  assertEquals(e.framesPerRealisation, 121, "⌊12 / 0.1⌋ + 1 frames");
  assertEquals(e.objectsPerFrame, 140, "the larger sweep value of initial.count");
  assertEquals(e.seriesPerFrame > 50, true, "50 profile bins among the series");
  assertEquals(estimateStudy(s, { workers: 2, toRun: 28 }).toRun, 28);
});

// The size model against a database actually written by a run (its file size after the run).
Deno.test("estimateStudy's database size is within a factor 3 of what a run writes", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const s = normalizeText(
      study(
        "{ duration: 2, sampleInterval: 0.05, tolerance: 1.0e-6 }",
        "realisations: 4\nsweep:\n  grid:\n    initial.count: [24, 40]",
      ),
      `${dir}/p.yaml`,
    );
    const e = estimateStudy(s, { workers: 1 });
    await runForTest(s, `${dir}/p.sqlite`, 1);
    const size = Deno.statSync(`${dir}/p.sqlite`).size;
    const ratio = e.databaseBytes / size;
    assert(
      ratio > 1 / 3 && ratio < 3,
      `estimated ${e.databaseBytes} B, written ${size} B (ratio ${ratio.toFixed(2)})`,
    );
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("judgeEstimate refuses an unbounded frame count with the fields to change", () => {
  const s = normalizeText(study("{ duration: 1.0e308, sampleInterval: 0.1 }"));
  const v = judgeEstimate(estimateStudy(s, { workers: 2 }), plenty);
  assertEquals(v.refusals.length, 1);
  assert(v.refusals[0].includes("frames") && v.refusals[0].includes("run.duration"), v.refusals[0]);
});

Deno.test("judgeEstimate refuses past the free disk and the available memory, and warns past the soft limits", () => {
  const s = normalizeText(study("{ duration: 100, sampleInterval: 0.001 }", "realisations: 50"));
  const e = estimateStudy(s, { workers: 2 });
  const small: Resources = {
    freeDiskBytes: e.databaseBytes / 2,
    availableMemoryBytes: e.memoryBytes / 2,
    unknown: [],
  };
  const v = judgeEstimate(e, small);
  assertEquals(v.refusals.length, 2, v.refusals.join("\n"));
  assert(v.refusals[0].includes("free on its disk") && v.refusals[0].includes("--db"), v.refusals[0]);
  assert(v.refusals[1].includes("memory") && v.refusals[1].includes("--workers"), v.refusals[1]);
  const tight: Resources = {
    freeDiskBytes: e.databaseBytes * 2,
    availableMemoryBytes: e.memoryBytes * 1.5,
    unknown: [],
  };
  const w = judgeEstimate(e, tight);
  assertEquals(w.refusals, []);
  assertEquals(w.warnings.length, 2, w.warnings.join("\n"));
  const unknown = judgeEstimate(e, {
    freeDiskBytes: null,
    availableMemoryBytes: null,
    unknown: ["free disk space (x)"],
  });
  assertEquals(unknown.refusals, []);
  assert(unknown.lines.some((l) => l.startsWith("not checked: free disk space")));
});

// A thousand points of a million realisations: refused from the counts, with the planning cost named; the plan
// (one object per realisation, ~400 B each) is never built.
Deno.test("a study of 10⁹ realisations is refused for memory without being planned", () => {
  const axis = (base: number) => `[${Array.from({ length: 10 }, (_, i) => base + i / 1000).join(", ")}]`;
  const s = normalizeText(
    study(
      "{ duration: 1, sampleInterval: 0.1 }",
      `realisations: 1000000\nsweep:\n  grid:\n    initial.radius: ${axis(1)}\n    friction.alpha: ${
        axis(0)
      }\n    initial.centre: ${`[${Array.from({ length: 10 }, (_, i) => `[${i}, 0]`).join(", ")}]`}`,
    ),
  );
  const e = estimateStudy(s, { workers: 2 });
  assertEquals(e.total, 1e9);
  const v = judgeEstimate(e, plenty);
  assert(v.refusals.some((r) => r.includes("to plan 1.00e+9 realisations")), v.refusals.join("\n"));
});

Deno.test("the point-vortex engine warns when O(N²) sums make every step slow", () => {
  const s = normalizeText(study("{ duration: 1, sampleInterval: 0.5 }", "", 200_000));
  const v = judgeEstimate(estimateStudy(s, { workers: 1 }), plenty);
  assert(v.warnings.some((w) => w.includes("200000 vortices") && w.includes("O(N²)")), v.warnings.join("\n"));
});

Deno.test("runStudy refuses past a hard limit before creating the database", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const s = normalizeText(study("{ duration: 1.0e308, sampleInterval: 0.1 }"), `${dir}/huge.yaml`);
    let error: unknown;
    try {
      await runForTest(s, `${dir}/huge.sqlite`, 1);
    } catch (e) {
      error = e;
    }
    assert(error instanceof PreflightRefused, String(error));
    assertEquals([...Deno.readDirSync(dir)].length, 0, "no database, no lock file");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
