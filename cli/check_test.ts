import { assert, assertEquals } from "../test/_assert.ts";
import { checkReport } from "./check.ts";
import { tempDir } from "../test/_tmp.ts";

async function write(text: string): Promise<string> {
  const dir = tempDir();
  await Deno.writeTextFile(`${dir}/s.yaml`, text);
  return `${dir}/s.yaml`;
}

const GOOD = `name: film
engine: point-vortex-2d
parameters:
  lengthUnit: µm
  initial: { kind: random-cloud, count: 8, radius: 1.0 }
sweep:
  grid: { initial.count: [8, 10] }
realisations: 3
seed: 7
run: { duration: 1, sampleInterval: 0.5 }
`;

/** Keys of an object, sorted (shape checks). */
const keys = (o: unknown) => Object.keys(o as object).sort();

Deno.test("checkReport: the JSON of a valid study has the documented shape", async () => {
  const path = await write(GOOD);
  const r = JSON.parse(JSON.stringify(await checkReport(path)));
  assertEquals(keys(r), ["file", "ok", "problems", "study", "warnings"]);
  assertEquals([r.file, r.ok, r.problems, r.warnings], [path, true, [], []]);
  assertEquals(keys(r.study), [
    "description",
    "engine",
    "firstRealisation",
    "hash",
    "name",
    "observables",
    "points",
    "realisations",
    "run",
    "runs",
    "seed",
    "units",
  ]);
  assertEquals(r.study.engine.id, "point-vortex-2d");
  assertEquals([r.study.realisations, r.study.runs, r.study.seed], [3, 6, "7"]);
  assertEquals(r.study.points.map((p: { index: number; label: string }) => [p.index, p.label]), [
    [0, "initial.count=8"],
    [1, "initial.count=10"],
  ]);
  assertEquals(keys(r.study.points[0]), ["index", "label", "pointHash", "varied"]);
  assertEquals(keys(r.study.run), ["duration", "maxDistance", "sampleInterval", "tolerance"]);
  assertEquals(r.study.units.time, "µm²/κ");
  assertEquals(r.study.units.diffusion, "D/κ");
  assert(
    Array.isArray(r.study.units.lines) && r.study.units.lines.length === 2,
    JSON.stringify(r.study.units),
  );
  assertEquals(r.study.firstRealisation, { lines: [] });
  assert(/^[0-9a-f]{64}$/.test(r.study.hash));
});

Deno.test("checkReport: problems and deprecation warnings carry file, line, column, path, message and code", async () => {
  const bad = await checkReport(
    await write(GOOD.replace("count: 8,", "count: -8,").replace("seed: 7\n", "")),
  );
  assertEquals(bad.ok, false);
  assertEquals(bad.study, undefined);
  assert(bad.problems.length >= 2, JSON.stringify(bad.problems));
  for (const p of bad.problems) {
    assertEquals(keys(p).filter((k) => k !== "value"), ["code", "column", "file", "line", "message", "path"]);
  }
  assert(bad.problems.some((p) => p.path === "seed" && p.code === "missing"), JSON.stringify(bad.problems));
  const old = await checkReport(
    await write(`name: rings
engine: vortex-filament-3d
parameters:
  resolution: 2.5e-6
  initial: { kind: ring-cloud, count: 2, radius: 1.0e-5, cloudRadius: 3.0e-5 }
seed: 1
run: { duration: 1.0e-4, sampleInterval: 1.0e-4 }
`),
  );
  assertEquals(old.ok, true);
  assertEquals(old.warnings.map((w) => [w.line, w.path, w.code]), [[
    5,
    "parameters.initial.kind",
    "deprecated",
  ]]);
});
