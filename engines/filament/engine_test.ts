import assert from "node:assert/strict";
import { EngineFailure } from "../contract.ts";
import type { EngineEvent, Frame, RunControls } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { filamentEngine } from "./mod.ts";
import { ringPoints } from "./initial.ts";
import { assertBelow, assertRelClose } from "./_assert.ts";
import { BETA_POLYGON, makeSim, ringSpeed, simConfig } from "./_testing.ts";

interface Captured {
  frames: {
    t: number;
    n: number;
    id: number[];
    x: number[];
    y: number[];
    z: number[];
    loop: number[];
    marker: number[];
    d: Record<string, number>;
  }[];
  events: EngineEvent[];
  scalars: Record<string, number>;
}

async function run(
  params: unknown,
  controls: Partial<RunControls> = {},
  seed = 1,
  threads = 1,
): Promise<Captured> {
  const p = filamentEngine.paramsSchema.parse(params);
  const out: Captured = { frames: [], events: [], scalars: {} };
  const sink = {
    frame: (f: Frame) =>
      out.frames.push({
        t: f.t,
        n: f.n,
        id: Array.from(f.id.subarray(0, f.n)),
        x: Array.from(f.x.subarray(0, f.n)),
        y: Array.from(f.y.subarray(0, f.n)),
        z: Array.from(f.z!.subarray(0, f.n)),
        loop: Array.from(f.loop!.subarray(0, f.n)),
        marker: Array.from(f.marker!.subarray(0, f.n)),
        d: { ...f.diagnostics },
      }),
    event: (e: EngineEvent) => out.events.push(e),
  };
  const res = await filamentEngine.run({
    params: p,
    controls: { duration: 1, sampleInterval: 0.25, tolerance: 1e-6, maxDistance: 1e3, ...controls },
    rng: RandomStream.fromState([seed, 2, 3, 4]),
    threads,
  }, sink);
  out.scalars = { ...res.scalars };
  return out;
}

const dimless = { units: "dimensionless", coreRadius: 1e-4, resolution: 0.1 };

Deno.test("filamentEngine declares its id, version and capabilities", () => {
  assert.equal(filamentEngine.id, "vortex-filament-3d");
  assert.equal(filamentEngine.version, "3.0.0");
  const c = filamentEngine.capabilities;
  assert.equal(c.dimension, 3);
  assert.deepEqual([...c.fields], ["loop", "marker"]);
  assert.equal(c.objects, "filament-point");
  for (const k of ["reconnection", "loop-removal", "marker-transfer"]) assert.ok(k in c.events, k);
  for (
    const k of ["line_length", "energy", "impulse_x", "impulse_y", "impulse_z", "loop_count", "reconnections"]
  ) {
    assert.ok(k in c.diagnostics, k);
  }
});

Deno.test("filamentEngine: a ring in SI units moves at 8.8195e-2 m/s (R = 1 µm, a₀ = 1e-10 m)", async () => {
  // docs/check-values.md §3.2 SI example (κ = 9.9693e-8 m²/s, C = 0.17278): v = 8.8195e-2 m/s; 0.5 % tolerance.
  const r = await run({ resolution: 1e-7, initial: { kind: "ring", radius: 1e-6 } }, {
    duration: 2e-5,
    sampleInterval: 1e-5,
    maxDistance: 1e-3,
  });
  assert.equal(r.frames.length, 3);
  const cz = (f: Captured["frames"][number]) => f.z.reduce((a, b) => a + b, 0) / f.n;
  assertRelClose((cz(r.frames[2]) - cz(r.frames[0])) / 2e-5, 8.8195e-2, 5e-3, "ring speed (m/s)");
  assertRelClose(r.scalars.initial_rms_radius, 1e-6, 1e-3, "initial_rms_radius (m)");
});

Deno.test("filamentEngine streams frames with contiguous loops, persistent marker ids and diagnostics", async () => {
  const r = await run({
    ...dimless,
    initial: { kind: "ring-pair", radius: 1, separation: 1.6, angle: 0.6 },
  }, {
    duration: 0.5,
    sampleInterval: 0.1,
  });
  assert.deepEqual(r.frames.map((f) => Math.round(f.t * 10)), [0, 1, 2, 3, 4, 5]);
  const markerIds = (f: Captured["frames"][number]) => new Set(f.id.filter((_, i) => f.marker[i] === 1));
  const m0 = markerIds(r.frames[0]);
  for (const f of r.frames) {
    for (const id of m0) assert.ok(markerIds(f).has(id), `marker ${id} kept at t = ${f.t}`);
    // Loops contiguous: a loop id never reappears after another loop started.
    const seen = new Set<number>();
    for (let i = 0; i < f.n; i++) {
      if (i > 0 && f.loop[i] !== f.loop[i - 1]) assert.ok(!seen.has(f.loop[i]), "contiguous loops");
      seen.add(f.loop[i]);
    }
    assert.equal(seen.size, f.d.loop_count);
  }
  assert.equal(r.frames[0].d.loop_count, 2);
  assert.equal(r.frames[5].d.loop_count, 1);
  assert.equal(r.scalars.reconnections, 1);
  assert.equal(r.events.filter((e) => e.kind === "reconnection").length, 1);
  for (
    const k of [
      "initial_line_density",
      "initial_rms_radius",
      "initial_loop_count",
      "radius_rejected_fraction",
      "steps",
    ]
  ) {
    assert.ok(Number.isFinite(r.scalars[k]), k);
  }
  assert.equal(r.scalars.initial_loop_count, 2);
});

Deno.test("filamentEngine: a single ring conserves impulse and energy (drift scalars)", async () => {
  // Exact invariants of a single ring at T = 0 (Saffman (1992) §10.2); both drifts at round-off level.
  const r = await run({ ...dimless, initial: { kind: "ring", radius: 1 } });
  assertBelow(r.scalars["drift.impulse"], 1e-12, "drift.impulse");
  assertBelow(r.scalars["drift.energy"], 1e-12, "drift.energy");
  assertRelClose(r.frames[4].d.impulse_z, Math.PI, 2e-3, "impulse πκR²");
});

Deno.test("filamentEngine: ring-ball records measured density, rms radius and rejected fraction", async () => {
  const r = await run({
    ...dimless,
    initial: { kind: "ring-ball", count: 6, radius: { mean: 0.5, sd: 0.2 }, cloudRadius: 2 },
  }, { duration: 0.02, sampleInterval: 0.02 });
  const L0 = r.frames[0].d.line_length;
  assertRelClose(r.scalars.initial_line_density, L0 / (4 / 3 * Math.PI * 8), 1e-12, "initial_line_density");
  assert.ok(r.scalars.radius_rejected_fraction >= 0 && r.scalars.radius_rejected_fraction < 1);
  assert.equal(r.scalars.initial_loop_count, 6);
  const again = await run({
    ...dimless,
    initial: { kind: "ring-ball", count: 6, radius: { mean: 0.5, sd: 0.2 }, cloudRadius: 2 },
  }, { duration: 0.02, sampleInterval: 0.02 });
  assert.deepEqual(again.frames, r.frames, "same seed, same frames");
});

Deno.test("filamentEngine: positions are unwrapped across the periodic box", async () => {
  // A ring crossing the box boundary keeps continuous coordinates (docs/methods.md §2.1: image counters).
  const r = await run({
    ...dimless,
    domain: { kind: "periodic", size: 3 },
    initial: { kind: "ring", radius: 0.5, centre: [0, 0, 1.3] },
  }, { duration: 0.5, sampleInterval: 0.5 });
  const zmax = Math.max(...r.frames[1].z);
  assert.ok(zmax > 1.5, `unwrapped z beyond the box face: ${zmax}`);
});

Deno.test("filamentEngine reads loops from a file (asynchronous run)", async () => {
  const dir = await Deno.makeTempDir();
  const path = `${dir}/ring.json`;
  await Deno.writeTextFile(path, JSON.stringify({ loops: [ringPoints(1, [0, 0, 0], [0, 0, 1], 0.3, 0)] }));
  const r = await run({ ...dimless, initial: { kind: "given", file: path } }, {
    duration: 0.1,
    sampleInterval: 0.1,
  });
  assert.ok(r.frames[0].n >= 63, `remeshed to δ: ${r.frames[0].n} points`);
  await Deno.remove(dir, { recursive: true });
  await assert.rejects(
    () => run({ ...dimless, initial: { kind: "given", file: `${dir}/none.json` } }),
    (e: unknown) => e instanceof EngineFailure && e.kind === "invalid-state",
  );
});

Deno.test("filamentEngine guards: blow-up, point cap, bad controls, NaN", async () => {
  await assert.rejects(
    () => run({ ...dimless, initial: { kind: "ring", radius: 1 } }, { maxDistance: 1.2 }),
    (e: unknown) => e instanceof EngineFailure && e.kind === "blow-up" && /maxDistance/.test(e.message),
  );
  await assert.rejects(
    () => run({ ...dimless, numerics: { maxPoints: 20 }, initial: { kind: "ring", radius: 1 } }),
    (e: unknown) => e instanceof EngineFailure && e.kind === "invalid-state" && /maxPoints/.test(e.message),
  );
  await assert.rejects(
    () => run({ ...dimless, initial: { kind: "ring", radius: 1 } }, { sampleInterval: 2 }),
    (e: unknown) => e instanceof EngineFailure && e.kind === "invalid-state",
  );
  const { sim } = makeSim(simConfig(0.1), [ringPoints(1, [0, 0, 0], [0, 0, 1], 0.075, 0)]);
  sim.state.x[3] = Number.NaN;
  assert.throws(() => sim.advance(0.01), (e: unknown) => e instanceof EngineFailure && e.kind === "nan");
});

Deno.test("filamentEngine: uniform normal flow along the axis makes a ring grow at dR/dt = α(V − U(R))", async () => {
  // Schwarz equation with v_n ∥ n̂: radial velocity α(V − U) (Barenghi, Donnelly & Vinen, J. Low Temp. Phys.
  // 52, 189 (1983); docs/methods.md §7.2 "normal flow"). Reference: the ODE integrated here by RK4 with small steps.
  const alpha = 0.2, V = 2 * ringSpeed(1, 1, 1e-4, BETA_POLYGON);
  const r = await run({
    ...dimless,
    friction: { kind: "coefficients", alpha, alphaPrime: 0 },
    normalVelocity: [0, 0, V],
    initial: { kind: "ring", radius: 1 },
  }, { duration: 1, sampleInterval: 1 });
  let R = 1;
  const f = (q: number) => alpha * (V - ringSpeed(1, q, 1e-4, BETA_POLYGON));
  for (let k = 0; k < 1000; k++) {
    const h = 1e-3, k1 = f(R), k2 = f(R + h / 2 * k1), k3 = f(R + h / 2 * k2), k4 = f(R + h * k3);
    R += h / 6 * (k1 + 2 * k2 + 2 * k3 + k4);
  }
  const fr = r.frames[1];
  const cx = fr.x.reduce((a, b) => a + b, 0) / fr.n, cy = fr.y.reduce((a, b) => a + b, 0) / fr.n;
  const Rsim = fr.x.reduce((a, _, i) => a + Math.hypot(fr.x[i] - cx, fr.y[i] - cy), 0) / fr.n;
  assert.ok(R > 1.05, `the ring grows (ODE R(1) = ${R})`);
  assertRelClose(Rsim, R, 2e-3, "R(1) vs ODE");
});

Deno.test("filamentEngine: heater counter-superflow shrinks a coaxial ring as R² = R₀² − 2(ρn/ρs)u r t", async () => {
  // v_s,ext = −(ρ_n/ρ_s) u_ref r_ref/r r̂ (docs/methods.md §2.7, zero net mass flux; Khalatnikov (1965)) moves a ring
  // coaxial with the heater radially: d(R²)/dt = −2(ρn/ρs) u_ref r_ref, with α = α′ = 0. Points entering
  // r < r_h are absorbed (events) and the remnant loop removed.
  const ratio = 0.5, u = 0.1;
  const params = {
    ...dimless,
    heater: { radius: 0.5, referenceRadius: 1, referenceVelocity: u, normalToSuperRatio: ratio },
    initial: { kind: "ring", radius: 1 },
  };
  const r = await run(params, { duration: 8, sampleInterval: 2 });
  const fr = r.frames[1];
  const Rsim = fr.x.reduce((a, _, i) => a + Math.hypot(fr.x[i], fr.y[i]), 0) / fr.n;
  assertRelClose(Rsim, Math.sqrt(1 - 2 * ratio * u * 2), 1e-6, "R(2)");
  assert.ok(r.events.some((e) => e.kind === "heater-absorption"), "heater absorption events");
  assert.equal(r.frames[4].n, 0, "ring absorbed by t = 8");
});

Deno.test("filamentEngine: helix in a periodic box keeps its line and rotates", async () => {
  // Path test of the helix initial shape (physics checked in simulation_test.ts): one line, no
  // reconnection, constant length to 1e-9 (a helix of small amplitude rotates rigidly; docs/check-values.md §3.3).
  const r = await run({
    ...dimless,
    resolution: 1 / 24,
    domain: { kind: "periodic", size: 1 },
    initial: { kind: "helix", waves: 2, amplitude: 1e-3 },
  }, { duration: 0.004, sampleInterval: 0.002 });
  assert.equal(r.frames.at(-1)!.d.loop_count, 1);
  assertRelClose(r.frames.at(-1)!.d.line_length, r.frames[0].d.line_length, 1e-9, "line length");
  assert.notEqual(r.frames.at(-1)!.x[0], r.frames[0].x[0]);
  assert.equal(r.scalars["drift.impulse"], undefined, "no impulse drift reported in a periodic box");
});

Deno.test("filamentEngine: the run-time accuracy check stores the sampled FMM error and warns when it exceeds the tolerance", async () => {
  // Acceptance measure of docs/methods.md §2.9 (99th percentile of |Δv|/v_rms ≤ 1e-3) sampled during the run: with the
  // default FMM settings it stays below the tolerance; with a deliberately loose expansion (p = 3, θ = 0.9) the
  // check must see errors above a tight tolerance and emit accuracy-warning events.
  const params = (fmm: Record<string, number>, tolerance: number) => ({
    ...dimless,
    initial: { kind: "ring-ball", count: 6, radius: 0.6, cloudRadius: 0.8 },
    numerics: { summation: "fmm", fmm, accuracyCheck: { every: 2, samples: 16, tolerance } },
  });
  const good = await run(params({}, 1e-3), { duration: 0.006, sampleInterval: 0.003 });
  assert.ok(good.scalars.velocity_error_samples >= 32, `samples ${good.scalars.velocity_error_samples}`);
  assertBelow(good.scalars.velocity_error_p99, 1e-3, "sampled p99 |Δv|/v_rms at the defaults");
  assert.ok(Number.isNaN(good.frames[0].d.velocity_error), "no error before the first step");
  assert.ok(good.frames[1].d.velocity_error > 0, "a frame diagnostic after checks");
  assert.equal(good.events.filter((e) => e.kind === "accuracy-warning").length, 0);
  const loose = await run(params({ order: 3, theta: 0.9 }, 1e-5), { duration: 0.006, sampleInterval: 0.003 });
  assert.ok(loose.scalars.velocity_error_p99 > 1e-5, `loose p99 ${loose.scalars.velocity_error_p99}`);
  assert.ok(loose.events.some((e) => e.kind === "accuracy-warning"), "accuracy-warning emitted");
});

Deno.test("filamentEngine: threads inside a realisation give bit-identical frames and scalars", async () => {
  // Run controls that do not enter hashes must not change results (engine contract, `threads`).
  const params = {
    ...dimless,
    initial: { kind: "ring-ball", count: 8, radius: 0.6, cloudRadius: 0.9 },
    numerics: { summation: "fmm" },
  };
  const controls = { duration: 0.004, sampleInterval: 0.002 };
  const one = await run(params, controls, 3, 1), two = await run(params, controls, 3, 2);
  assert.ok(one.frames[0].n > 300, `points ${one.frames[0].n}`);
  assert.equal(JSON.stringify(two.frames), JSON.stringify(one.frames));
  assert.deepEqual(two.scalars, one.scalars);
});
