import { applyRefinement } from "./_refine.ts";
import { POINT_VORTEX_REFINEMENT } from "./point-vortex/credibility.ts";
import { pointVortexParamsSchema } from "./point-vortex/params.ts";
import { GP_REFINEMENT } from "./gross-pitaevskii/credibility.ts";
import { findEngine } from "./registry.ts";
import { assert, assertEquals } from "../test/_assert.ts";

const CONTROLS = { duration: 1, sampleInterval: 0.1, tolerance: 1e-6, maxDistance: 1e6 };

Deno.test("applyRefinement: 2D numerics: tolerance ÷10, a raised step cap back to its default, else ÷10", () => {
  const [numerics] = POINT_VORTEX_REFINEMENT.variants;
  const raised = pointVortexParamsSchema.parse({
    initial: { kind: "random-cloud", count: 8, radius: 1 },
    integrator: { stepCapFactor: 2 },
  });
  const a = applyRefinement(raised, CONTROLS, numerics);
  assert("changes" in a);
  assertEquals(a.controls.tolerance, 1e-7);
  assertEquals((a.params as typeof raised).integrator.stepCapFactor, 0.2);
  assertEquals(a.changes, [
    "run.tolerance 1e-6 → 1e-7 (÷10)",
    "integrator.stepCapFactor 2 → 0.2 (its default)",
  ]);
  const atDefault = pointVortexParamsSchema.parse({ initial: { kind: "random-cloud", count: 8, radius: 1 } });
  const b = applyRefinement(atDefault, CONTROLS, numerics);
  assert("changes" in b);
  assertEquals((b.params as typeof atDefault).integrator.stepCapFactor, 0.02);
  assertEquals(raised.integrator.stepCapFactor, 2, "the input is not changed");
});

Deno.test("applyRefinement: the annihilation pass does not apply without annihilation", () => {
  const p = pointVortexParamsSchema.parse({ initial: { kind: "random-cloud", count: 8, radius: 1 } });
  const r = applyRefinement(p, CONTROLS, POINT_VORTEX_REFINEMENT.variants[1]);
  assertEquals(r, { notApplicable: "no annihilation in this study" });
  const q = pointVortexParamsSchema.parse({
    initial: { kind: "random-cloud", count: 8, radius: 1 },
    annihilationDistance: 0.01,
  });
  const s = applyRefinement(q, CONTROLS, POINT_VORTEX_REFINEMENT.variants[2]);
  assert("changes" in s);
  assertEquals((s.params as typeof q).annihilationDistance, 0.02);
});

Deno.test("applyRefinement: GP grid doubled in points (integers stay integers); 1024 points cannot be refined", () => {
  const gp = findEngine("gross-pitaevskii-2d")!;
  const base = {
    grid: { points: 512, spacing: 0.5 },
    trap: { kind: "periodic" },
    initial: { kind: "random-cloud", count: 4, radius: 20, minSeparation: 3 },
  };
  const r = applyRefinement(gp.paramsSchema.parse(base), CONTROLS, GP_REFINEMENT.variants[0]);
  assert("changes" in r);
  const p = r.params as { grid: { points: number; spacing: number }; timeStep: number };
  assertEquals(p.grid, { points: 1024, spacing: 0.25 });
  assertEquals(p.timeStep, 0.05);
  assert(gp.paramsSchema.safeParse(r.params).success);
  const big = applyRefinement(
    gp.paramsSchema.parse({ ...base, grid: { points: 1024, spacing: 0.5 } }),
    CONTROLS,
    GP_REFINEMENT.variants[0],
  );
  assert("changes" in big);
  assert(!gp.paramsSchema.safeParse(big.params).success, "2048 points must be refused by the schema");
});

Deno.test("applyRefinement: a path that is not set is not applicable", () => {
  const r = applyRefinement({ a: 1 }, CONTROLS, {
    id: "x",
    pass: "numerics",
    rules: [{ path: "b.c", factor: 0.5 }],
  });
  assertEquals(r, { notApplicable: "b.c is not set at this point" });
});
