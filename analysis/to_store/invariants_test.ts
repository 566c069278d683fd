import { checkInvariants, invariantsText } from "./invariants.ts";
import { pointVortexConservation } from "../../engines/point-vortex/credibility.ts";
import { pointVortexParamsSchema } from "../../engines/point-vortex/params.ts";
import { assert, assertEquals } from "../../test/_assert.ts";

const CONTROLS = { duration: 1, sampleInterval: 0.1, tolerance: 1e-9, maxDistance: 1e6 };

Deno.test("checkInvariants: flags the realisations whose drift exceeds the engine's threshold", () => {
  const check = pointVortexConservation(
    pointVortexParamsSchema.parse({ initial: { kind: "random-cloud", count: 8, radius: 1 } }),
    CONTROLS,
  );
  const a = checkInvariants(check, [
    {
      id: 11,
      index: 0,
      scalars: { "drift.hamiltonian": 3e-9, "drift.impulse": 1e-14, "drift.angular_impulse": 1e-11 },
    },
    {
      id: 12,
      index: 1,
      scalars: { "drift.hamiltonian": -4e-4, "drift.impulse": 2e-14, "drift.angular_impulse": 2e-7 },
    },
    { id: 13, index: 2, scalars: { "drift.hamiltonian": Number.NaN } },
  ]);
  assertEquals(a.status, "flagged");
  const h = a.invariants.find((i) => i.scalar === "drift.hamiltonian")!;
  assertEquals(h.flagged.map((f) => f.index), [1, 2], "a NaN drift is flagged too");
  assertEquals(h.maxDrift, Infinity);
  assertEquals(a.invariants.find((i) => i.scalar === "drift.impulse")!.status, "ok");
  assert(invariantsText(a).includes("FLAGGED"));
});

Deno.test("checkInvariants: friction makes the invariants non-conserved and says why", () => {
  const check = pointVortexConservation(
    pointVortexParamsSchema.parse({
      initial: { kind: "random-cloud", count: 8, radius: 1 },
      friction: { alpha: 0.01 },
    }),
    CONTROLS,
  );
  const a = checkInvariants(check, [{ id: 1, index: 0, scalars: {} }]);
  assertEquals(a.status, "not-conserved");
  assert(a.reason!.includes("mutual friction (α = 0.01"), a.reason!);
});

Deno.test("checkInvariants: realisations with reconnections are left out of the energy check, with the reason", () => {
  const a = checkInvariants({
    invariants: [{
      scalar: "drift.energy",
      quantity: "energy",
      threshold: 1e-3,
      basis: "test",
      unlessNonzero: [{ scalar: "reconnections", reason: "reconnections change the energy" }],
    }],
    notConserved: [],
  }, [
    { id: 1, index: 0, scalars: { "drift.energy": 0.2, reconnections: 3 } },
    { id: 2, index: 1, scalars: { "drift.energy": 1e-6, reconnections: 0 } },
  ]);
  assertEquals(a.status, "ok");
  assertEquals(a.invariants[0].checked, 1);
  assertEquals(a.invariants[0].skipped, [{ reason: "reconnections change the energy", count: 1 }]);
});
