/**
 * The engine conformance suite: every engine with a study in test/conformance/ must store bit-identical
 * numbers with 1 and 2 workers, resume without recomputing, and store failures (blow-up guard) with their
 * reason while the other realisations go on. (Reproducibility requirements of the project; common practice,
 * no source.)
 */
import { assert, assertEquals } from "./_assert.ts";
import { countWhere, digestResults, loadNormalizedForTest, REPO, runForTest } from "./_study.ts";
import type { NormalizedStudy } from "../study/normalize.ts";
import { tempFile } from "./_tmp.ts";

const studies = [...Deno.readDirSync(`${REPO}test/conformance`)]
  .filter((e) => e.name.endsWith(".yaml"))
  .map((e) => `${REPO}test/conformance/${e.name}`)
  .sort();

function tmp(): string {
  return tempFile(".sqlite");
}

for (const path of studies) {
  const name = path.split("/").pop()!;

  Deno.test(`conformance ${name}: 1 and 2 workers store bit-identical results`, async () => {
    const study = await loadNormalizedForTest(path);
    const a = tmp(), b = tmp();
    const ra = await runForTest(study, a, 1);
    const rb = await runForTest(study, b, 2);
    assertEquals(ra.failed, 0, `failures: ${JSON.stringify(ra.failures)}`);
    assertEquals(ra.completed, study.points.length * study.realisations);
    assertEquals(rb.completed, ra.completed);
    const da = digestResults(a);
    assert(da.length > 1000, "the digest covers stored frames and series");
    assertEquals(digestResults(b), da);
  });

  Deno.test(`conformance ${name}: a rerun resumes without recomputing and changes nothing`, async () => {
    const study = await loadNormalizedForTest(path);
    const db = tmp();
    await runForTest(study, db, 2);
    const before = digestResults(db);
    const again = await runForTest(study, db, 2);
    assertEquals(again.completed, 0);
    assertEquals(again.skipped, study.points.length * study.realisations);
    assertEquals(digestResults(db), before);
  });

  Deno.test(`conformance ${name}: the blow-up guard stores failures with a reason`, async () => {
    const study = await loadNormalizedForTest(path);
    const tiny: NormalizedStudy = {
      ...study,
      run: { ...study.run, maxDistance: 1e-9 },
      hash: study.hash + "-tiny",
    };
    const db = tmp();
    const r = await runForTest(tiny, db, 2);
    assertEquals(r.failed, study.points.length * study.realisations);
    assertEquals(r.failures[0].kind, "blow-up");
    assert(r.failures[0].error.includes("maxDistance"), r.failures[0].error);
    assertEquals(
      countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'failed' AND error <> ''"),
      r.failed,
    );
  });
}
