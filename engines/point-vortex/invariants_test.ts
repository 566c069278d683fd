import assert from "node:assert/strict";
import { assertAbs, assertRel } from "./_testing.ts";
import { CompensatedSum, hamiltonian, moments, removedEnergy } from "./invariants.ts";

const PI = Math.PI;

Deno.test("hamiltonian of a pair is −(Γ₁Γ₂/2π) ln d in the plane", () => {
  // docs/check-values.md §1.2: H = −(1/2π) Σ_{i<j} Γ_iΓ_j ln|r_i − r_j|.
  const h = hamiltonian(
    { kind: "unbounded" },
    2,
    Float64Array.of(0, 3),
    Float64Array.of(0, 4),
    Float64Array.of(1, -1),
  );
  assertRel(h, Math.log(5) / (2 * PI), 1e-15, "H dipole");
});

Deno.test("hamiltonian in a disk adds the image terms (1/4π) Σ Γ_iΓ_j ln|R² − z_i z̄_j|", () => {
  // docs/check-values.md §1.3 "Disk extras": one vortex: (Γ²/4π) ln(R² − r²); two vortices add the cross terms.
  const R = 2, x = Float64Array.of(0.5, -0.3), y = Float64Array.of(0.2, 0.9), g = Float64Array.of(1, -1);
  const one = hamiltonian({ kind: "disk", radius: R }, 1, x, y, g);
  assertRel(one, Math.log(R * R - 0.29) / (4 * PI), 1e-15, "one vortex");
  const two = hamiltonian({ kind: "disk", radius: R }, 2, x, y, g);
  // |R² − z₁ z̄₂|, z₁ = 0.5 + 0.2i, z₂ = −0.3 + 0.9i: z₁ z̄₂ = (0.5·−0.3 + 0.2·0.9) + i(0.2·−0.3 − 0.5·0.9)
  const re = R * R - (0.5 * -0.3 + 0.2 * 0.9), im = -(0.2 * -0.3 - 0.5 * 0.9);
  const expected = (Math.log(R * R - 0.29) + Math.log(R * R - 0.9)) / (4 * PI) +
    -(1 * -1) * Math.log(Math.hypot(0.8, 0.7)) / (2 * PI) +
    (1 * -1) * Math.log(Math.hypot(re, im)) / (2 * PI);
  assertRel(two, expected, 1e-14, "two vortices");
});

Deno.test("removedEnergy is the drop of H when the flagged vortices are deleted", () => {
  // Algebraic identity of the pair sum (common practice, no source), for each domain.
  const x = Float64Array.of(0.1, 0.7, -0.4, 0.2, -0.6), y = Float64Array.of(0.3, -0.2, 0.5, -0.7, -0.1);
  const g = Float64Array.of(1, -1, 1, -1, 2);
  const mask = Uint8Array.of(0, 1, 0, 1, 0);
  const keep = [0, 2, 4];
  for (
    const d of [{ kind: "unbounded" as const }, { kind: "disk" as const, radius: 1.5 }, {
      kind: "periodic" as const,
      side: 3,
    }]
  ) {
    const full = hamiltonian(d, 5, x, y, g);
    const rest = hamiltonian(
      d,
      3,
      Float64Array.from(keep, (k) => x[k]),
      Float64Array.from(keep, (k) => y[k]),
      Float64Array.from(keep, (k) => g[k]),
    );
    assertAbs(removedEnergy(d, 5, x, y, g, mask), full - rest, 1e-14, `${d.kind}`);
  }
});

Deno.test("moments gives Q, P, I and the absolute scales, optionally masked", () => {
  // docs/check-values.md §1.2: Q = ΣΓx, P = ΣΓy, I = ΣΓ|r|².
  const out = { impulseX: 0, impulseY: 0, angularImpulse: 0, absFirst: 0, absSecond: 0 };
  moments(2, Float64Array.of(3, 1), Float64Array.of(4, 0), Float64Array.of(1, -2), null, out);
  assert.deepEqual(out, { impulseX: 1, impulseY: 4, angularImpulse: 23, absFirst: 7, absSecond: 27 });
  moments(2, Float64Array.of(3, 1), Float64Array.of(4, 0), Float64Array.of(1, -2), Uint8Array.of(0, 1), out);
  assert.deepEqual(out, { impulseX: -2, impulseY: 0, angularImpulse: -2, absFirst: 2, absSecond: 2 });
});

Deno.test("CompensatedSum recovers small terms lost by naive summation", () => {
  // Neumaier, ZAMM 54, 39 (1974): 1 + 1e100 + 1 − 1e100 = 2.
  const s = new CompensatedSum();
  for (const v of [1, 1e100, 1, -1e100]) s.add(v);
  assert.equal(s.value, 2);
});
