/**
 * A corrupt import file fails only its own realisation through the real runner, with a message naming the file,
 * row and column; realisations already stored are kept when the study is run again (spindrift's own
 * requirement; common practice, no source).
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
  const second = await runForTest(study(text.replace("realisations: 3", "realisations: 5")), db, 2);
  assertEquals(second.skipped, 3, "the three stored realisations are kept, not recomputed");
  assertEquals(second.completed, 1);
  assertEquals(second.failed, 1);
  assert(/r4\.csv:\d+.*column 'x'.*1\.2\.3/.test(second.failures[0].error), second.failures[0].error);
  assertEquals(countWhere(db, "SELECT COUNT(*) AS c FROM realisations WHERE status = 'done'"), 4);
  // The stored numbers of the first three realisations are unchanged.
  const after = digestResults(db);
  for (const line of before.split("\n").filter((l) => l.startsWith("["))) assert(after.includes(line));
});
