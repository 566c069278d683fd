/**
 * A corrupt import file fails only its own realisation through the real runner, with a message naming the file,
 * row and column; realisations already stored are kept when the study is run again; a data file replaced under
 * the same name is read again (its content fingerprint is part of the point's identity). Spindrift's own
 * requirements; common practice, no source.
 */
import { assert, assertEquals } from "./_assert.ts";
import { countWhere, digestResults, normalizeText, REPO, runForTest } from "./_study.ts";

Deno.test("imported-tracks-2d: a corrupt file fails only its realisation and loses nothing stored", async () => {
  const dir = Deno.makeTempDirSync();
  for (let i = 0; i < 3; i++) {
    Deno.copyFileSync(`${REPO}test/imported/walkers/r${i}.csv`, `${dir}/r${i}.csv`);
  }
  const study = (text: string) => {
    Deno.writeTextFileSync(`${dir}/study.yaml`, text);
    return normalizeText(text, `${dir}/study.yaml`);
  };
  const text = `
name: corrupt-import
engine: imported-tracks-2d
parameters:
  source:
    files: r{index}.csv
realisations: 3
seed: 1
run: { duration: 2, sampleInterval: 0.1 }
`;
  const db = `${dir}/study.sqlite`;
  const first = await runForTest(study(text), db, 2);
  assertEquals(first.completed, 3);
  const before = digestResults(db);

  // Corrupt realisation 1's file (a non-numeric x in its fifth data row) and add two more realisations.
  const lines = Deno.readTextFileSync(`${dir}/r1.csv`).split("\n");
  const header = lines.findIndex((l) => l.startsWith("t,"));
  const cells = lines[header + 5].split(",");
  cells[2] = "1.2.3";
  lines[header + 5] = cells.join(",");
  Deno.writeTextFileSync(`${dir}/r1.csv`, lines.join("\n"));
  Deno.copyFileSync(`${dir}/r0.csv`, `${dir}/r3.csv`);
  Deno.copyFileSync(`${dir}/r1.csv`, `${dir}/r4.csv`);
  // r1.csv changed and r3, r4 joined: the point's input fingerprint changed, so the point is read again.
  const second = await runForTest(study(text.replace("realisations: 3", "realisations: 5")), db, 2);
  assertEquals(second.skipped, 0, "new content, new point: nothing stored counts for it");
  assertEquals([second.completed, second.failed], [3, 2]);
  assertEquals(second.inputChanges.map((c) => c.files.map((f) => f.path)), [["r1.csv", "r3.csv", "r4.csv"]]);
  assert(
    second.failures.every((f) => /r[14]\.csv:\d+.*column 'x'.*1\.2\.3/.test(f.error)),
    second.failures[0].error,
  );
  assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'"), 6);
  // The stored numbers of the first three realisations are unchanged: nothing was deleted.
  const after = digestResults(db);
  for (const line of before.split("\n").filter((l) => l.startsWith("["))) assert(after.includes(line));
  Deno.removeSync(dir, { recursive: true });
});

// The stale-data case: a data file replaced under the same path used to keep its old results ("0 computed,
// 2 already stored"). Now the run reads it again and says which point and file changed.
Deno.test("imported-tracks-2d: a data file replaced under the same name is read again, and the run says so", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    for (let i = 0; i < 2; i++) {
      Deno.copyFileSync(`${REPO}test/imported/walkers/r${i}.csv`, `${dir}/r${i}.csv`);
    }
    const text = `
name: replaced-data
engine: imported-tracks-2d
parameters: { source: { files: "r{index}.csv" } }
realisations: 2
seed: 1
run: { duration: 2, sampleInterval: 0.1 }
`;
    Deno.writeTextFileSync(`${dir}/study.yaml`, text);
    const db = `${dir}/study.sqlite`;
    const first = await runForTest(normalizeText(text, `${dir}/study.yaml`), db, 1);
    assertEquals([first.completed, first.inputChanges.length], [2, 0]);
    const again = await runForTest(normalizeText(text, `${dir}/study.yaml`), db, 1);
    assertEquals([again.completed, again.skipped], [0, 2], "unchanged files: nothing to do");
    // Replace r0.csv by the walkers of r2.csv (same columns, other numbers).
    Deno.copyFileSync(`${REPO}test/imported/walkers/r2.csv`, `${dir}/r0.csv`);
    const third = await runForTest(normalizeText(text, `${dir}/study.yaml`), db, 1);
    assertEquals([third.completed, third.skipped], [2, 0]);
    assertEquals(third.inputChanges.length, 1);
    assertEquals(third.inputChanges[0].files.map((f) => f.path), ["r0.csv"]);
    assert(third.inputChanges[0].files[0].before.startsWith("sha256:"));
    assert(third.inputChanges[0].files[0].before !== third.inputChanges[0].files[0].after);
    const finals = countWhere(db, "SELECT COUNT(DISTINCT point_hash) AS c FROM realisations");
    assertEquals(finals, 2, "old and new content each keep their realisations");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
