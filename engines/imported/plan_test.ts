import { deepStrictEqual as assertEquals } from "node:assert/strict";
import { EngineFailure } from "../contract.ts";
import { tracks2dParamsSchema } from "./params.ts";
import { expandPattern, planRead } from "./plan.ts";
import { Slot } from "./assemble.ts";

// File-choice rules are spindrift's own (documented in plan.ts); common practice, no source.
Deno.test("expandPattern: {index} from 0, {number} from 1, zero padding", () => {
  assertEquals(expandPattern("r{index}.csv", 7), "r7.csv");
  assertEquals(expandPattern("r{number}.csv", 7), "r8.csv");
  assertEquals(expandPattern("run{number:3}/x{index:2}.csv", 4), "run005/x04.csv");
  assertEquals(expandPattern("r{index}-{index}.csv", 12), "r12-12.csv");
});

Deno.test("planRead: files pattern, list, directory and realisation column", () => {
  const p = (source: unknown) => tracks2dParamsSchema.parse({ source });
  assertEquals(planRead(p({ files: "r{index}.csv", directory: "data" }), 2, 3).path, "data/r3.csv");
  // Relative paths resolve against the study file's folder, then source.directory within it.
  assertEquals(planRead(p({ files: "r{index}.csv" }), 2, 3, "/studies").path, "/studies/r3.csv");
  assertEquals(
    planRead(p({ files: "r{index}.csv", directory: "data" }), 2, 3, "/studies").path,
    "/studies/data/r3.csv",
  );
  assertEquals(planRead(p({ files: "/abs/r{index}.csv" }), 2, 3, "/studies").path, "/abs/r3.csv");
  assertEquals(planRead(p({ files: ["a.csv", "/abs/b.csv"], directory: "data/" }), 2, 1).path, "/abs/b.csv");
  const shared = planRead(
    p({ file: "all.csv", realisationColumn: "run", realisationValues: [10, 20] }),
    2,
    1,
  );
  assertEquals(shared.filter, { ref: "run", value: 20, param: "source.realisationColumn" });
  assertEquals(
    planRead(p({ file: "all.csv", realisationColumn: "run", realisationOffset: 1 }), 2, 4).filter?.value,
    5,
  );
  const tsv = planRead(p({ file: "a.tsv" }), 2, 0);
  assertEquals([tsv.format, tsv.delimiter, tsv.comment, tsv.header], ["tsv", "\t", "#", true]);
  assertEquals(planRead(p({ file: "a.txt", format: "csv", delimiter: "tab" }), 2, 0).delimiter, "\t");
  assertEquals(tsv.columns.map((c) => c.slot), [Slot.T, Slot.ID, Slot.X, Slot.Y, Slot.CIRCULATION]);
});

Deno.test("planRead: a realisation without data fails with the reason", () => {
  const p = (source: unknown) => tracks2dParamsSchema.parse({ source });
  const cases: [unknown, number, string][] = [
    [{ files: ["a.csv"] }, 2, "no file for realisation 2"],
    [{ file: "a.csv" }, 1, "holds one realisation (no source.realisationColumn), but this is realisation 1"],
    [
      { file: "a.csv", realisationColumn: "run", realisationValues: [1] },
      1,
      "no realisation value for realisation 1",
    ],
  ];
  for (const [source, index, part] of cases) {
    try {
      planRead(p(source), 2, index);
      throw new Error(`expected a failure for ${JSON.stringify(source)}`);
    } catch (e) {
      if (!(e instanceof EngineFailure) || !e.message.includes(part)) throw e;
    }
  }
});

Deno.test("planRead: each file of a list is read in its own format (a .h5 after a .csv is HDF5)", () => {
  const params = tracks2dParamsSchema.parse({ source: { files: ["r0.csv", "r1.h5", "r2.jsonl"] } });
  assertEquals([0, 1, 2].map((i) => planRead(params, 2, i).format), ["csv", "hdf5", "jsonl"]);
  const forced = tracks2dParamsSchema.parse({ source: { files: ["r0.txt", "r1.dat"], format: "tsv" } });
  assertEquals([0, 1].map((i) => planRead(forced, 2, i).format), ["tsv", "tsv"]);
  const bad = tracks2dParamsSchema.safeParse({ source: { files: ["r0.csv", "r1.dat"] } });
  assertEquals(bad.success, false);
  assertEquals(bad.error?.issues.map((i) => [i.path.join("."), i.message.slice(0, 52)]), [
    ["source.format", "cannot tell the format from the file name 'r1.dat' ("],
  ]);
});
