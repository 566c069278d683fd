import { assert, assertEquals } from "../../test/_assert.ts";
import type { EnsembleResultInput } from "../../store/ensemble.ts";
import type { PointRecord } from "../../store/reads.ts";
import { streamFromSeed } from "../estimators/seed.ts";
import { type DiffusionAnalysis, noDiffusion } from "./diffusion.ts";
import { questionRows } from "./question.ts";

function point(index: number, count: number): PointRecord {
  return {
    index,
    pointHash: `p${index}`,
    paramsHash: `h${index}`,
    label: `initial.count=${count}`,
    varied: { "initial.count": count },
    params: {},
    controls: {},
    engineId: "point-vortex-2d",
    engineVersion: "1",
    inputs: {},
  };
}

function answer(D: number | null, se: number, seed: string): DiffusionAnalysis {
  const rng = streamFromSeed(seed);
  if (D === null) return noDiffusion("no-diffusive-regime", "lag exponent 1.4", seed);
  return {
    ...noDiffusion("ok", "", seed),
    reason: null,
    value: D,
    replicates: Float64Array.from({ length: 4000 }, () => D + se * rng.normal()),
  };
}

Deno.test("questionRows: differences, ratios and the trend against the swept count, with plain verdicts", () => {
  const rows: EnsembleResultInput[] = [];
  const lines = questionRows(
    [
      { point: point(0, 100), diffusion: answer(0.42, 0.02, "a") },
      { point: point(1, 140), diffusion: answer(0.45, 0.02, "b") },
      { point: point(2, 180), diffusion: answer(0.60, 0.02, "c") },
    ],
    { level: 0.95, estimator: "diffusion/D" },
    rows,
  );
  const get = (hash: string, name: string) => rows.find((r) => r.pointHash === hash && r.name === name)!;
  // 0.45 − 0.42 with se √2·0.02 ≈ 0.028: no detectable difference; 0.60 − 0.42: detectable.
  assert(
    String(get("p1", "difference").detail!.verdict).startsWith("no detectable dependence"),
    lines.join("\n"),
  );
  assert(String(get("p2", "difference").detail!.verdict).includes("D is larger at initial.count=180"));
  assertEquals(get("p1", "ratio").value, 0.45 / 0.42);
  const trend = get("p0", "trend_slope");
  assertEquals(trend.detail!.parameter, "initial.count");
  assert(trend.value! > 0 && trend.lower! > 0, `slope ${trend.value} [${trend.lower}, ${trend.upper}]`);
  assertEquals(get("p0", "verdict").value, null);
  assertEquals(lines.length, 3);
  assert(lines.every((l) => l.startsWith("The question: ")));
});

Deno.test("questionRows: points without a diffusive regime are named, and with fewer than two answers nothing is compared", () => {
  const rows: EnsembleResultInput[] = [];
  const lines = questionRows(
    [
      { point: point(0, 100), diffusion: answer(null, 0, "a") },
      { point: point(1, 140), diffusion: answer(0.45, 0.02, "b") },
    ],
    { level: 0.95, estimator: "diffusion/D" },
    rows,
  );
  assertEquals(rows.map((r) => r.name), ["verdict"]);
  assert(lines[0].includes("not answerable with D") && lines[0].includes("initial.count=100"), lines[0]);
  assertEquals(
    questionRows([{ point: point(0, 100), diffusion: answer(0.4, 0.01, "x") }], {
      level: 0.95,
      estimator: "diffusion/D",
    }, rows),
    [],
  );
});
