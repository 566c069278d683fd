import assert from "node:assert/strict";
import { AccuracyMonitor } from "./accuracy.ts";
import { nonlocalDirect } from "./biot_savart.ts";
import { assertRelClose } from "./_assert.ts";
import { tangle, vec } from "./_testing.ts";

Deno.test("AccuracyMonitor recovers a known injected error and reports zero for the exact sum", () => {
  // Synthetic known answer: the exact direct sum plus a uniform offset e gives |Δv|/v_rms = |e|/v_rms at
  // every sampled point (v_rms of the offset field, as the monitor measures it).
  const { s, g } = tangle(4);
  const n = s.n, cf = 1 / (4 * Math.PI);
  const exact = vec(n);
  nonlocalDirect(n, s.x, s.y, s.z, s.prev, g.dx, g.dy, g.dz, cf, exact[0], exact[1], exact[2]);
  const zero = vec(n);
  const m = new AccuracyMonitor({ every: 1, samples: 10, tolerance: 1e-3 });
  m.check(n, s.x, s.y, s.z, s.prev, g.dx, g.dy, g.dz, 0, cf, zero, exact);
  assert.ok(m.takeFrameP99() < 1e-13, "exact sum: no error");
  const e = [1e-3, -2e-3, 0.5e-3];
  const off = exact.map((a, c) => a.map((v) => v + e[c])) as [Float64Array, Float64Array, Float64Array];
  m.check(n, s.x, s.y, s.z, s.prev, g.dx, g.dy, g.dz, 0, cf, zero, off);
  let ms = 0;
  for (let i = 0; i < n; i++) ms += off[0][i] ** 2 + off[1][i] ** 2 + off[2][i] ** 2;
  assertRelClose(m.takeFrameP99(), Math.hypot(...e) / Math.sqrt(ms / n), 1e-9, "injected |e|/v_rms");
  assert.equal(m.summary().samples, 20);
  assert.ok(Number.isNaN(m.takeFrameP99()), "NaN when nothing was sampled since the last frame");
});
