import assert from "node:assert/strict";
import {
  assertAbs,
  assertBelow,
  assertRel,
  expectFailure,
  explicit,
  run,
  runParsed,
  type SavedFrame,
} from "./_testing.ts";
import { pointVortexParamsSchema } from "./params.ts";

const PI = Math.PI;
const LONG = Deno.env.get("SPINDRIFT_LONG") !== "1";

/** Regular N-gon of unit vortices on radius R, radii perturbed by eps·cos(mode·θ). */
function ngon(N: number, R: number, eps = 0, mode = 0): [number, number, number][] {
  return Array.from({ length: N }, (_, k) => {
    const th = 2 * PI * k / N;
    const r = R * (1 + eps * Math.cos(mode * th));
    return [r * Math.cos(th), r * Math.sin(th), 1] as [number, number, number];
  });
}

/** Unwrapped polar angle of vortex i through the frames (frames close enough that |Δθ| < π). */
function angles(frames: SavedFrame[], i: number, cx = 0, cy = 0): number[] {
  const out: number[] = [];
  let acc = 0, prev = Math.atan2(frames[0].y[i] - cy, frames[0].x[i] - cx);
  out.push(prev);
  for (const f of frames.slice(1)) {
    const a = Math.atan2(f.y[i] - cy, f.x[i] - cx);
    let d = a - prev;
    if (d > PI) d -= 2 * PI;
    if (d < -PI) d += 2 * PI;
    acc += d;
    prev = a;
    out.push(out[0] + acc);
  }
  return out;
}

const dist = (f: SavedFrame, a: number, b: number) => Math.hypot(f.x[a] - f.x[b], f.y[a] - f.y[b]);

Deno.test("simulate translates a dipole at κ/(2πd) and keeps its separation", () => {
  // Saffman, Vortex Dynamics (1992) §7.3; docs/check-values.md §1.3: U d/Γ = 1/(2π) = 0.1591549431; docs/methods.md §7.1
  // tolerance: speed 1e-10, separation drift 1e-12 d.
  const d = 0.8, T = 20;
  const r = run(explicit([[-d / 2, 0, 1], [d / 2, 0, -1]]), { duration: T, sampleInterval: 2 });
  for (const f of r.frames) {
    assertRel(f.y[0], f.t / (2 * PI * d), 1e-10, `y(t = ${f.t})`);
    assertAbs(dist(f, 0, 1), d, 1e-12 * d, `separation at t = ${f.t}`);
  }
});

Deno.test("simulate rotates a co-rotating pair at κ/(πd²) with phase error below 1e-8 per period", () => {
  // docs/check-values.md §1.3: Ω d²/Γ = 1/π; docs/methods.md §7.1: phase error < 1e-8 rad per period (DP5).
  const d = 1, T = 2 * PI * PI * d * d; // period 2π²d²/Γ
  const r = run(explicit([[-d / 2, 0, 1], [d / 2, 0, 1]]), { duration: 3 * T, sampleInterval: T / 8 });
  const th = angles(r.frames, 1);
  r.frames.forEach((f, k) =>
    assertAbs(th[k], f.t / (PI * d * d), 1e-8 * Math.max(1, f.t / T), `phase at ${f.t}`)
  );
});

Deno.test("simulate rotates a Thomson 5-gon at (N − 1)κ/(4πR²)", () => {
  // docs/check-values.md §1.3 (Thomson 1883; Aref et al., Adv. Appl. Mech. 39, 1 (2003)): Ω R²/Γ = (N − 1)/(4π);
  // docs/methods.md §7.1 tolerance 1e-10 (relative, on the angle travelled).
  const N = 5, R = 1.3, Om = (N - 1) / (4 * PI * R * R);
  const r = run(explicit(ngon(N, R)), { duration: 30, sampleInterval: 0.5 });
  const th = angles(r.frames, 0);
  const last = r.frames.at(-1)!;
  assertRel(th.at(-1)!, Om * last.t, 1e-10, "angle travelled");
  assertRel(Math.hypot(last.x[3], last.y[3]), R, 1e-10, "radius");
});

function ngonDeviation(frames: SavedFrame[], N: number): number[] {
  return frames.map((f) => {
    const rs = Array.from(f.x, (x, i) => Math.hypot(x, f.y[i]));
    const mean = rs.reduce((a, b) => a + b, 0) / N;
    return Math.max(...rs.map((v) => Math.abs(v - mean)));
  });
}

Deno.test("simulate keeps a perturbed 6-gon bounded and a perturbed 8-gon grows at Havelock's rate", () => {
  // docs/check-values.md §1.4: stable for N ≤ 6, unstable for N ≥ 8; N = 8 grows at σ = √32 Γ/(4πR²) (Havelock, Phil.
  // Mag. 11, 617 (1931), mode k = N/2). Tolerance "within a few %": 3 %.
  const eps = 1e-9;
  const six = run(explicit(ngon(6, 1, eps, 3)), { duration: 40 * 8 * PI * PI / 5, sampleInterval: 5 }); // 40 periods
  assertBelow(Math.max(...ngonDeviation(six.frames, 6)), 10 * eps, "N = 6 radial deviation");
  const eight = run(explicit(ngon(8, 1, eps, 4)), { duration: 30, sampleInterval: 0.25 });
  const dev = ngonDeviation(eight.frames, 8);
  const k1 = dev.findIndex((a) => a > 1e-7), k2 = dev.findIndex((a) => a > 1e-4);
  assert.ok(k1 > 0 && k2 > k1, `8-gon did not grow: deviations ${dev.slice(-3)}`);
  const sigma = Math.log(dev[k2] / dev[k1]) / (eight.frames[k2].t - eight.frames[k1].t);
  assertRel(sigma, Math.sqrt(32) / (4 * PI), 0.03, "growth rate σ");
});

Deno.test("simulate precesses one vortex in a disk at κ/(2π(R² − r²)) and conserves H and I", () => {
  // docs/check-values.md §1.3 (Saffman 1992 §7.3): Ω = Γ/(2π(R² − r²)); docs/methods.md §7.1 tolerance 1e-10.
  const R = 1, r0 = 0.5, Om = 1 / (2 * PI * (R * R - r0 * r0));
  const res = run(explicit([[r0, 0, 1]], { domain: { kind: "disk", radius: R } }), {
    duration: 20,
    sampleInterval: 0.5,
  });
  const th = angles(res.frames, 0);
  res.frames.forEach((f, k) => {
    assertAbs(th[k], Om * f.t, 1e-10 * Math.max(1, Om * f.t), `angle at ${f.t}`);
    assertAbs(Math.hypot(f.x[0], f.y[0]), r0, 1e-10 * r0, `radius at ${f.t}`);
  });
  // docs/check-values.md §1.3: H and I conserved in a disk; H = (Γ²/4π) ln(R² − r²) for one vortex.
  assertRel(
    res.frames[0].diagnostics.hamiltonian,
    Math.log(R * R - r0 * r0) / (4 * PI),
    1e-14,
    "H of one vortex",
  );
  // docs/methods.md §7.1 bounds (rtol = 1e-10): H relative drift < 1e-8, I ≤ 10·rtol.
  assertBelow(res.summary.scalars["drift.hamiltonian"], 1e-8, "drift.hamiltonian");
  assertBelow(res.summary.scalars["drift.angular_impulse"], 10 * 1e-10, "drift.angular_impulse");
  assert.equal(res.summary.scalars["drift.impulse"], undefined, "P is not conserved in a disk");
});

Deno.test("simulate follows the self-similar three-vortex collapse up to 0.99 t_c", () => {
  // docs/check-values.md §1.3 (Aref, Phys. Fluids 22, 393 (1979); Kimura 1987 [MEM]): Γ = (2, 2, −1) at (−1, 0),
  // (1, 0), (1, √2): side ratios fixed (r13²/r12² = 3/2, r23²/r12² = 1/2), r12² = 4(1 − t/t_c), t_c = 3√2π.
  // docs/methods.md §7.1: ratios to 1e-8 up to 0.99 t_c.
  const tc = 3 * Math.SQRT2 * PI;
  const r = run(explicit([[-1, 0, 2], [1, 0, 2], [1, Math.SQRT2, -1]]), {
    duration: 0.99 * tc,
    sampleInterval: 0.03 * tc,
  });
  assert.equal(r.frames.length, 34);
  for (const f of r.frames) {
    const r12 = dist(f, 0, 1) ** 2, r13 = dist(f, 0, 2) ** 2, r23 = dist(f, 1, 2) ** 2;
    assertAbs(r13 / r12, 1.5, 1e-8, `r13²/r12² at ${f.t}`);
    assertAbs(r23 / r12, 0.5, 1e-8, `r23²/r12² at ${f.t}`);
    assertRel(r12, 4 * (1 - f.t / tc), 1e-8, `r12² at ${f.t}`);
  }
});

function driftRun(duration: number) {
  return run(
    { initial: { kind: "random-cloud", count: 200, radius: 10, minSeparation: 0.1 } },
    { duration, sampleInterval: duration / 10, tolerance: 1e-10 },
  );
}

Deno.test("simulate conserves H, P and I for 200 random ± vortices (t = 5)", () => {
  // docs/check-values.md §1.2 (Kirchhoff; Aref 1983): H, Q, P, I conserved. docs/methods.md §7.1 tolerances: P to roundoff
  // (~1e-13·N), I ≤ 10·rtol, H relative drift < 1e-8 (rtol = 1e-10).
  const s = driftRun(5).summary.scalars;
  console.log(
    `N = 200, t = 5: drift H ${s["drift.hamiltonian"]}, P ${s["drift.impulse"]}, I ${
      s["drift.angular_impulse"]
    }, steps ${s.steps}`,
  );
  assertBelow(s["drift.hamiltonian"], 1e-8, "drift.hamiltonian");
  assertBelow(s["drift.impulse"], 1e-13 * 200, "drift.impulse");
  assertBelow(s["drift.angular_impulse"], 10 * 1e-10, "drift.angular_impulse");
});

Deno.test({
  name: "simulate conserves H, P and I for 200 random ± vortices over 10³ time units (SPINDRIFT_LONG)",
  ignore: LONG,
  fn() {
    // Same sources and tolerances as the short run (docs/methods.md §7.1: N = 200, 10³ time units).
    const s = driftRun(1000).summary.scalars;
    console.log(
      `N = 200, t = 1000: drift H ${s["drift.hamiltonian"]}, P ${s["drift.impulse"]}, I ${
        s["drift.angular_impulse"]
      }, steps ${s.steps}, rejected ${s.rejected_steps}`,
    );
    assertBelow(s["drift.hamiltonian"], 1e-8, "drift.hamiltonian");
    assertBelow(s["drift.impulse"], 1e-13 * 200, "drift.impulse");
    assertBelow(s["drift.angular_impulse"], 10 * 1e-10, "drift.angular_impulse");
  },
});

Deno.test("simulate translates a ± pair across a periodic box at the Weiss–McWilliams velocity (unwrapped frames)", () => {
  // docs/check-values.md §1.5 reference values (Γ = 1, L = 2π, separation (1.0, 0.5)): the pair moves rigidly with
  // (u, v) = (−0.0577718066553, 0.1145789633536). Over t = 200 it crosses the box several times.
  const u = -0.0577718066553, v = 0.1145789633536, T = 200;
  const r = run(explicit([[0, 0, 1], [1, 0.5, -1]], { domain: { kind: "periodic", side: 2 * PI } }), {
    duration: T,
    sampleInterval: 20,
  });
  for (const f of r.frames) {
    assertAbs(f.x[0], u * f.t, 1e-9, `x0 at ${f.t}`);
    assertAbs(f.y[0], v * f.t, 1e-9, `y0 at ${f.t}`);
    assertAbs(f.x[1] - f.x[0], 1, 1e-11, `Δx at ${f.t}`);
    assertAbs(f.y[1] - f.y[0], 0.5, 1e-11, `Δy at ${f.t}`);
  }
  assert.ok(r.frames.at(-1)!.y[0] > 3 * PI, "the pair left the primary box");
  // Impulse with unwrapped positions and H are conserved (docs/check-values.md §1.5).
  assertBelow(r.summary.scalars["drift.impulse"], 1e-12, "drift.impulse");
  assertBelow(r.summary.scalars["drift.hamiltonian"], 1e-12, "drift.hamiltonian");
  assertAbs(r.frames[0].diagnostics.hamiltonian, -(-1) * -0.0458787983, 1e-10, "H = −Γ₁Γ₂ G(1.0, 0.5)");
});

Deno.test("simulate conserves H and P for a periodic ± cloud", () => {
  // docs/check-values.md §1.5: H and (ΣΓx, ΣΓy) with unwrapped positions are conserved in the periodic box.
  const r = run(
    {
      domain: { kind: "periodic", side: 10 },
      initial: { kind: "random-cloud", count: 40, radius: 4, minSeparation: 0.2 },
    },
    { duration: 2, sampleInterval: 0.5, tolerance: 1e-10 },
  );
  assertBelow(r.summary.scalars["drift.hamiltonian"], 1e-8, "drift.hamiltonian");
  assertBelow(r.summary.scalars["drift.impulse"], 1e-12, "drift.impulse");
});

Deno.test("simulate with friction shrinks a dipole as d² = d₀² − 2ακt/π and moves it (1 − α′)(d₀ − d)/(2α)", () => {
  // docs/check-values.md §2, pair with friction [DERIVED there, verified to 1e-9]: d² = d₀² − 2αt/π,
  // y_c(t) = (1 − α′)(d₀ − d(t))/(2α).
  const alpha = 0.1, alphaP = 0.05, d0 = 1;
  const r = run(explicit([[-d0 / 2, 0, 1], [d0 / 2, 0, -1]], { friction: { alpha, alphaPrime: alphaP } }), {
    duration: 12,
    sampleInterval: 1,
  });
  for (const f of r.frames) {
    const d2 = d0 * d0 - 2 * alpha * f.t / PI;
    assertRel(dist(f, 0, 1) ** 2, d2, 1e-9, `d² at ${f.t}`);
    assertRel(
      0.5 * (f.y[0] + f.y[1]) + 1e-300,
      (1 - alphaP) * (d0 - Math.sqrt(d2)) / (2 * alpha) + 1e-300,
      1e-9,
      `y_c at ${f.t}`,
    );
  }
  assert.equal(r.summary.scalars["drift.hamiltonian"], undefined, "no drift scalars for dissipative runs");
});

Deno.test("simulate with friction spreads a co-rotating pair (d² = d₀² + 2ακt/π) with the integrated phase", () => {
  // docs/check-values.md §2: d² = d₀² + 2αt/π, Ω = (1 − α′)/(πd²); integrating Ω gives
  // θ(t) = (1 − α′)/(2α) ln(1 + 2αt/(πd₀²)) (derived here from those two formulas).
  const alpha = 0.05, alphaP = 0.02, d0 = 1;
  const r = run(explicit([[-d0 / 2, 0, 1], [d0 / 2, 0, 1]], { friction: { alpha, alphaPrime: alphaP } }), {
    duration: 20,
    sampleInterval: 0.25,
  });
  const th = angles(r.frames, 1);
  r.frames.forEach((f, k) => {
    assertRel(dist(f, 0, 1) ** 2, d0 * d0 + 2 * alpha * f.t / PI, 1e-9, `d² at ${f.t}`);
    const expected = (1 - alphaP) / (2 * alpha) * Math.log(1 + 2 * alpha * f.t / (PI * d0 * d0));
    assertAbs(th[k], expected, 1e-8 * Math.max(1, expected), `phase at ${f.t}`);
  });
});

Deno.test("simulate with friction expands a Thomson 5-gon as R² = R₀² + α(N − 1)κt/(2π)", () => {
  // docs/check-values.md §2, Thomson N-gon with friction.
  const alpha = 0.1, N = 5, R0 = 1;
  const r = run(explicit(ngon(N, R0), { friction: { alpha } }), { duration: 10, sampleInterval: 1 });
  for (const f of r.frames) {
    assertRel(f.x[2] ** 2 + f.y[2] ** 2, R0 * R0 + alpha * (N - 1) * f.t / (2 * PI), 1e-9, `R² at ${f.t}`);
  }
});

Deno.test("simulate with friction spirals a disk vortex outward along R² ln(r/r₀) − (r² − r₀²)/2 = αt/(2π)", () => {
  // docs/check-values.md §2, single vortex in a disk (implicit solution).
  const alpha = 0.1, R = 1, r0 = 0.3;
  const res = run(explicit([[r0, 0, 1]], { domain: { kind: "disk", radius: R }, friction: { alpha } }), {
    duration: 10,
    sampleInterval: 1,
  });
  for (const f of res.frames) {
    const r = Math.hypot(f.x[0], f.y[0]);
    const lhs = R * R * Math.log(r / r0) - (r * r - r0 * r0) / 2;
    assertAbs(lhs, alpha * f.t / (2 * PI), 1e-10, `implicit relation at ${f.t} (r = ${r})`);
  }
});

Deno.test("simulate annihilates a shrinking dipole when d < d_ann and reports the event", () => {
  // docs/check-values.md §2: d² = d₀² − 2αt/π, so d reaches d_ann at t* = π(d₀² − d_ann²)/(2α). The event fires at the
  // end of the first step past t*; the step cap (0.2 d_min²/κ, docs/methods.md §1.2) bounds the delay.
  const alpha = 0.2, d0 = 1, dAnn = 0.2;
  const r = run(
    explicit([[-d0 / 2, 0, 1], [d0 / 2, 0, -1]], { friction: { alpha }, annihilationDistance: dAnn }),
    { duration: 10, sampleInterval: 0.5 },
  );
  const tStar = PI * (d0 * d0 - dAnn * dAnn) / (2 * alpha);
  assert.equal(r.events.length, 1);
  const e = r.events[0];
  assert.equal(e.kind, "annihilation");
  assert.deepEqual(e.ids, [0, 1]);
  assert.ok(e.t >= tStar && e.t - tStar <= 0.2 * dAnn * dAnn, `event at ${e.t}, t* = ${tStar}`);
  assertRel(e.data.separation, Math.sqrt(d0 * d0 - 2 * alpha * e.t / PI), 1e-8, "separation at the event");
  assertAbs(Math.hypot(e.data.x2 - e.data.x1, e.data.y2 - e.data.y1), e.data.separation, 1e-15, "positions");
  assert.equal(r.summary.scalars.annihilations, 1);
  assert.equal(r.frames.at(-1)!.n, 0);
  assert.equal(r.summary.scalars.final_count, 0);
});

Deno.test("simulate annihilates each vortex at most once and independently of list order", () => {
  // Greedy pairing by distance, each vortex once (docs/methods.md §1.6). One + vortex between two − vortices within
  // d_ann: exactly one pair goes, and it is the same physical pair whatever the list order (the exact-tie rule
  // by id is tested in annihilation_test.ts).
  const cfg: [number, number, number][] = [[0, 0, 1], [0.05, 0, -1], [-0.05, 0, -1], [5, 5, 1]];
  const order = [3, 2, 1, 0];
  const controls = { duration: 1e-3, sampleInterval: 1e-3 };
  const a = run(explicit(cfg, { annihilationDistance: 0.1 }), controls);
  const b = run(explicit(order.map((k) => cfg[k]), { annihilationDistance: 0.1 }), controls);
  assert.equal(a.events.length, 1);
  assert.equal(b.events.length, 1);
  const physical = (ids: readonly number[], map: (id: number) => number) => ids.map(map).sort();
  assert.deepEqual(physical(a.events[0].ids, (id) => id), physical(b.events[0].ids, (id) => order[id]));
  assert.equal(a.frames.at(-1)!.n, 2);
  assertAbs(a.events[0].data.separation, b.events[0].data.separation, 1e-15, "separation");
});

Deno.test("simulate annihilates a vortex at the disk wall when R − r < d_ann/2", () => {
  // docs/check-values.md §2: the vortex spirals out as R² ln(r/r₀) − (r² − r₀²)/2 = αt/(2π); it reaches
  // r* = R − d_ann/2 at t* from that relation (docs/methods.md §1.6 wall rule).
  const alpha = 0.2, R = 1, r0 = 0.5, dAnn = 0.1;
  const res = run(
    explicit([[r0, 0, 1]], {
      domain: { kind: "disk", radius: R },
      friction: { alpha },
      annihilationDistance: dAnn,
    }),
    { duration: 40, sampleInterval: 1 },
  );
  const rs = R - dAnn / 2;
  const tStar = (2 * PI / alpha) * (R * R * Math.log(rs / r0) - (rs * rs - r0 * r0) / 2);
  assert.equal(res.events.length, 1);
  const e = res.events[0];
  assert.equal(e.kind, "wall-annihilation");
  assert.deepEqual(e.ids, [0]);
  assert.ok(e.t >= tStar && e.t - tStar < 0.05, `event at ${e.t}, t* = ${tStar}`);
  assert.ok(
    e.data.wallDistance < dAnn / 2 && e.data.wallDistance > 0,
    `wall distance ${e.data.wallDistance}`,
  );
  assert.equal(res.summary.scalars.wall_annihilations, 1);
});

Deno.test("simulate places frames exactly at t = k·Δt for k = 0..⌊T/Δt⌋", () => {
  const r = run(explicit([[-0.5, 0, 1], [0.5, 0, 1]]), { duration: 0.3, sampleInterval: 0.1 });
  assert.deepEqual(r.frames.map((f) => f.t), [0, 0.1, 0.2, 0.1 * 3]);
  assert.deepEqual(r.frames.map((f) => f.index), [0, 1, 2, 3]);
  const r2 = run(explicit([[-0.5, 0, 1], [0.5, 0, 1]]), { duration: 1.05, sampleInterval: 0.5 });
  assert.deepEqual(r2.frames.map((f) => f.t), [0, 0.5, 1]);
});

Deno.test("simulate is deterministic: the same seed gives bit-identical frames, another seed differs", () => {
  const params = {
    initial: { kind: "random-cloud", count: 30, radius: 3, minSeparation: 0.1 },
    annihilationDistance: 0.05,
    friction: { alpha: 0.05 },
  };
  const controls = { duration: 2, sampleInterval: 0.5 };
  const a = run(params, controls), b = run(params, controls);
  assert.equal(a.frames.length, b.frames.length);
  a.frames.forEach((f, k) => {
    assert.deepEqual(new Uint8Array(f.x.buffer), new Uint8Array(b.frames[k].x.buffer), `x bits, frame ${k}`);
    assert.deepEqual(new Uint8Array(f.y.buffer), new Uint8Array(b.frames[k].y.buffer), `y bits, frame ${k}`);
    assert.deepEqual(f.id, b.frames[k].id);
    assert.deepEqual(f.g, b.frames[k].g);
  });
  assert.deepEqual(a.events, b.events);
  assert.deepEqual(a.summary, b.summary);
  const c = run(params, controls, [5, 6, 7, 8]);
  assert.notDeepEqual(Array.from(c.frames[0].x), Array.from(a.frames[0].x));
});

Deno.test("simulate reports initial scalars of a random cloud", () => {
  const r = run({ initial: { kind: "random-cloud", count: 20, radius: 2, minSeparation: 0.3 } }, {
    duration: 0.1,
    sampleInterval: 0.1,
  });
  const s = r.summary.scalars;
  assert.equal(s.initial_count, 20);
  assertRel(s.initial_density, 20 / (PI * 4), 1e-15, "N/(πR_c²)"); // docs/methods.md §3.2
  assert.ok(s.min_separation_initial >= 0.3, `min separation ${s.min_separation_initial}`);
  assert.ok(s.steps > 0 && s.rhs_evaluations >= 6 * s.steps);
});

Deno.test("simulate fails with nan for coincident vortices that bypass the schema", () => {
  const params = pointVortexParamsSchema.parse(explicit([[0, 0, 1], [1, 0, -1]]));
  if (params.initial.kind !== "explicit") throw new Error("unreachable");
  params.initial.vortices[1].x = 0;
  const e = expectFailure(() => runParsed(params, { duration: 1, sampleInterval: 1 }));
  assert.equal(e.kind, "nan");
});

Deno.test("simulate fails with blow-up when a vortex passes maxDistance", () => {
  const e = expectFailure(() =>
    run(explicit([[-0.005, 0, 1], [0.005, 0, -1]]), { duration: 10, sampleInterval: 1, maxDistance: 2 })
  );
  assert.equal(e.kind, "blow-up");
  // The dipole moves at 1/(2π·0.01) ≈ 15.9, so it passes |r| = 2 at t ≈ 0.126.
  assert.ok(e.t > 0.12 && e.t < 0.13, `failure time ${e.t}`);
});

Deno.test("simulate fails with step-underflow when maxSteps is exhausted", () => {
  const e = expectFailure(() =>
    run(explicit([[-0.5, 0, 1], [0.5, 0, 1]], { integrator: { maxSteps: 5 } }), {
      duration: 100,
      sampleInterval: 10,
    })
  );
  assert.equal(e.kind, "step-underflow");
});

Deno.test("simulate fails with invalid-state when a vortex reaches the disk wall without annihilation", () => {
  const e = expectFailure(() =>
    run(explicit([[0.9, 0, 1]], { domain: { kind: "disk", radius: 1 }, friction: { alpha: 0.5 } }), {
      duration: 100,
      sampleInterval: 1,
    })
  );
  assert.ok(e.kind === "invalid-state" || e.kind === "step-underflow", e.kind);
  assert.match(e.message, /wall|step size/);
});

Deno.test("simulate refuses invalid run controls with a clear message", () => {
  const e = expectFailure(() => run(explicit([[0, 0, 1]]), { duration: 1, sampleInterval: 2 }));
  assert.equal(e.kind, "invalid-state");
  assert.match(e.message, /sampleInterval/);
});
