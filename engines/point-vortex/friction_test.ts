import { assertAbs } from "./_testing.ts";
import { applyFriction } from "./friction.ts";

Deno.test("applyFriction with the normal fluid at rest gives (1 − α′)v_s − α s ẑ × v_s", () => {
  // docs/check-values.md §2 (Schwarz, Phys. Rev. B 38, 2398 (1988)): with v_n = 0, dr/dt = (1 − α′)v_s − α s ẑ×v_s,
  // ẑ × (a, b) = (−b, a).
  const alpha = 0.3, alphaPrime = 0.1;
  const g = Float64Array.of(1, -1, 2), us = [0.7, -0.2, 1.5], vs = [-0.4, 0.9, 0.25];
  const u = Float64Array.from(us), v = Float64Array.from(vs);
  applyFriction(3, g, u, v, { alpha, alphaPrime, normalVelocity: [0, 0] });
  for (let i = 0; i < 3; i++) {
    const s = Math.sign(g[i]);
    assertAbs(u[i], (1 - alphaPrime) * us[i] + alpha * s * vs[i], 1e-15, `u[${i}]`);
    assertAbs(v[i], (1 - alphaPrime) * vs[i] - alpha * s * us[i], 1e-15, `v[${i}]`);
  }
});

Deno.test("applyFriction makes a vortex at rest drift with a uniform normal flow", () => {
  // docs/check-values.md §2: dr/dt = v_s + α s ẑ×(v_n − v_s) + α′(v_n − v_s); with v_s = 0 the vortex moves at
  // α′v_n + α s ẑ×v_n (its sign decides the transverse direction).
  const g = Float64Array.of(1, -1), u = new Float64Array(2), v = new Float64Array(2);
  applyFriction(2, g, u, v, { alpha: 0.2, alphaPrime: 0.05, normalVelocity: [1, 0] });
  assertAbs(u[0], 0.05, 1e-16, "u(+)");
  assertAbs(v[0], 0.2, 1e-16, "v(+)");
  assertAbs(u[1], 0.05, 1e-16, "u(−)");
  assertAbs(v[1], -0.2, 1e-16, "v(−)");
});
