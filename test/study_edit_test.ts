/**
 * Editing a study keeps the results of parameter points whose normalized parameters and engine version are
 * unchanged (content hashes), runs only what is new, and `fresh` starts over (spindrift's own requirement;
 * common practice, no source).
 */
import { assertEquals } from "./_assert.ts";
import { countWhere, normalizeText, runForTest } from "./_study.ts";
import { runStudy } from "../study/runner.ts";
import { createProgress } from "../study/progress.ts";
import { tempFile } from "./_tmp.ts";

const BASE = `
name: edit-test
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 8, polarity: 0, shape: uniform-disk, radius: 1.0, minSeparation: 0.05 }
  annihilationDistance: 0.01
sweep:
  grid:
    initial.count: [8, 12]
realisations: 2
seed: 3
run: { duration: 0.2, sampleInterval: 0.05 }
`;

Deno.test("runStudy after an edit keeps unchanged points, runs new ones, and --fresh recomputes all", async () => {
  const db = tempFile(".sqlite");
  const first = await runForTest(normalizeText(BASE), db, 2);
  assertEquals(first.completed, 4);

  // A new sweep value and a reordered grid: the two old points keep their results.
  const edited = normalizeText(BASE.replace("[8, 12]", "[12, 16, 8]"));
  const second = await runForTest(edited, db, 2);
  assertEquals(second.skipped, 4);
  assertEquals(second.completed, 2);

  // Changing a parameter of every point (the cloud radius) makes all points new.
  const changed = normalizeText(BASE.replace("radius: 1.0", "radius: 1.5"));
  const third = await runForTest(changed, db, 2);
  assertEquals(third.skipped, 0);
  assertEquals(third.completed, 4);
  assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'"), 10);
  assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM studies"), 3);

  const fresh = await runStudy(changed, {
    dbPath: db,
    workers: 2,
    fresh: true,
    progress: createProgress({ quiet: true }),
    provenance: { toolVersion: "test", denoVersion: Deno.version.deno, gitCommit: null },
  });
  assertEquals(fresh.skipped, 0);
  assertEquals(fresh.completed, 4);
});
