import { deepStrictEqual, equal, ok } from "node:assert/strict";
import { parseStudyText } from "./load.ts";
import { type NormalizedStudy, normalizeStudy } from "./normalize.ts";
import { planStudy } from "./plan.ts";
import { contentHash } from "./hash.ts";
import { realisationKey } from "../store/keys.ts";
import { deriveSeedState, seedStateHex } from "./seeds.ts";
import { TOY_ENGINE, toyStudy } from "./_test_engine.ts";

function norm(text: string): NormalizedStudy {
  const r = parseStudyText(text, "t.yaml", { engines: [TOY_ENGINE] });
  if (!r.ok) throw new Error(r.problems.map((p) => p.message).join("\n"));
  return normalizeStudy(r.study, { text: r.text, sourcePath: "t.yaml", engines: [TOY_ENGINE] });
}

const SWEPT = toyStudy("realisations: 3\nsweep:\n  grid:\n    count: [4, 6, 10]\n");

Deno.test("planStudy lists every realisation point-major with its own seed", () => {
  const study = norm(SWEPT);
  const plan = planStudy(study);
  equal(plan.length, 9);
  deepStrictEqual(plan.map((r) => [r.pointIndex, r.index]), [
    [0, 0],
    [0, 1],
    [0, 2],
    [1, 0],
    [1, 1],
    [1, 2],
    [2, 0],
    [2, 1],
    [2, 2],
  ]);
  for (const r of plan) {
    const point = study.points[r.pointIndex];
    equal(r.pointHash, point.pointHash);
    deepStrictEqual(r.seedState, deriveSeedState(study.seed, point.paramsHash, r.index));
    equal(r.seedHex, seedStateHex(r.seedState));
    ok(/^[0-9a-f]{32}$/.test(r.seedHex));
  }
  equal(new Set(plan.map((r) => r.key)).size, 9);
  equal(new Set(plan.map((r) => r.seedHex)).size, 9);
});

Deno.test("planStudy seeds do not depend on the order or the set of points", () => {
  const a = planStudy(norm(SWEPT));
  const b = planStudy(norm(toyStudy("realisations: 3\nsweep:\n  grid:\n    count: [10, 2, 4]\n")));
  const byParams = (plan: typeof a, study: NormalizedStudy, count: number) =>
    plan.filter((r) => (study.points[r.pointIndex].params as { count: number }).count === count);
  const sa = norm(SWEPT);
  const sb = norm(toyStudy("realisations: 3\nsweep:\n  grid:\n    count: [10, 2, 4]\n"));
  for (const count of [4, 10]) {
    const ra = byParams(a, sa, count), rb = byParams(b, sb, count);
    deepStrictEqual(rb.map((r) => r.seedHex), ra.map((r) => r.seedHex));
    deepStrictEqual(rb.map((r) => r.key), ra.map((r) => r.key));
  }
});

Deno.test("planStudy is a pure function of the study (worker count is not an input)", () => {
  const a = planStudy(norm(SWEPT));
  const b = planStudy(norm(SWEPT.replace("  sampleInterval: 0.5", "  sampleInterval: 0.5\n  workers: 7")));
  deepStrictEqual(b, a);
  deepStrictEqual(planStudy(norm(SWEPT)), a);
});

Deno.test("planStudy keeps seeds but changes keys when only run controls change", () => {
  const a = planStudy(norm(SWEPT));
  const b = planStudy(norm(SWEPT.replace("duration: 10", "duration: 11")));
  deepStrictEqual(b.map((r) => r.seedHex), a.map((r) => r.seedHex));
  ok(b.every((r, i) => r.key !== a[i].key));
});

Deno.test("planStudy changes every seed with the master seed", () => {
  const a = planStudy(norm(SWEPT));
  const b = planStudy(norm(SWEPT.replace("seed: 42", "seed: 43")));
  ok(b.every((r, i) => r.seedHex !== a[i].seedHex && r.key !== a[i].key));
});

// Realisation keys are the content hash the planner always used (hash.ts), now written out in store/keys.ts so
// that the store can recompute them; a change would orphan every stored realisation. Common practice, no source.
Deno.test("planStudy keys are contentHash('spindrift-realisation-v1', { pointHash, index, seed })", () => {
  const study = norm(SWEPT);
  for (const r of planStudy(study)) {
    equal(
      r.key,
      contentHash("spindrift-realisation-v1", { pointHash: r.pointHash, index: r.index, seed: study.seed }),
    );
  }
  equal(
    realisationKey("0f", 123456, 'a "quoted" seed ✓'),
    contentHash("spindrift-realisation-v1", { pointHash: "0f", index: 123456, seed: 'a "quoted" seed ✓' }),
  );
});
