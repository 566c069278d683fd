/**
 * One realisation of the 2D point-vortex engine: initial state → adaptive integration → frames, events and
 * end scalars.
 *
 * Method: the state is two Float64Arrays (x, y) plus circulations and ids. Velocities come from a direct
 * O(N²) sum (unbounded plane, disk with images, or periodic box), followed by mutual friction. Time stepping is
 * Dormand–Prince 5(4) (integrator.ts) with each step capped at c·d_min²/max|Γ|, d_min the smallest distance at
 * the step's start. Steps are clamped so that frames land exactly on t = k·Δt_sample, k = 0..K with
 * K = ⌊duration/Δt_sample⌋ (a relative slack of 1e-12 absorbs decimal round-off such as 0.3/0.1).
 * After each accepted step, in this order: periodic positions are wrapped into [−L/2, L/2)² (integer image
 * counts kept, so frames carry unwrapped positions); guards run (|r| > maxDistance → "blow-up", using unwrapped
 * positions; a vortex at or beyond a disk wall → "invalid-state"); annihilations are applied (annihilation.ts)
 * and the first Runge–Kutta stage is recomputed.
 *
 * Invariant drift. At every frame the engine evaluates H, (Q, P) and I. Quantities carried away by removed
 * vortices are added back, so the drift measures integration error only:
 *   drift.hamiltonian     = max_t |H(t) + H_removed(t) − H(0)| / max(|H(0)|, Σ_i Γ_i²/2π),
 *   drift.impulse         = max_t |(Q,P)(t) + removed − (Q,P)(0)| / max(|(Q,P)(0)|, Σ_i |Γ_i||r_i(0)|),
 *   drift.angular_impulse = max_t |I(t) + I_removed(t) − I(0)| / max(|I(0)|, Σ_i |Γ_i||r_i(0)|²),
 * (a scale of 0 is replaced by 1, i.e. an absolute drift). The floors keep the ratios meaningful when an
 * invariant is near zero (neutral clouds; Σ_i Γ_i²/2π is the energy change of N unit-distance pairs changing
 * their distance by a factor e). Drifts are reported only where the dynamics conserves the quantity: α = 0 and
 * α′v_n = 0 (a conservative run), and not P in a disk nor I in a periodic box.
 *
 * References: see velocity.ts, periodic.ts, integrator.ts, friction.ts, annihilation.ts, invariants.ts.
 *
 * @example
 * ```ts
 * import { RandomStream } from "../random.ts";
 * import { pointVortexParamsSchema } from "./params.ts";
 * import { simulate } from "./simulate.ts";
 * const params = pointVortexParamsSchema.parse({ initial: { kind: "random-cloud", count: 16, radius: 2 } });
 * const summary = simulate({
 *   params,
 *   controls: { duration: 1, sampleInterval: 0.5, tolerance: 1e-10, maxDistance: 1e3 },
 *   rng: RandomStream.fromState([1, 2, 3, 4]),
 * }, { frame: (f) => console.log(f.t, f.n), event: () => {} });
 * summary.scalars.steps;
 * ```
 */
import { checkRunControls } from "../_controls.ts";
import { minimumSeparation } from "../_cloud.ts";
import { EngineFailure, type EngineRunInput, type EngineRunSummary, type FrameSink } from "../contract.ts";
import { AnnihilationSearch } from "./annihilation.ts";
import { applyFriction } from "./friction.ts";
import { initialVortices } from "./initial.ts";
import { DormandPrince, type PlanarRhs } from "./integrator.ts";
import {
  CompensatedSum,
  type DomainGeometry,
  hamiltonian,
  type Moments,
  moments,
  removedEnergy,
} from "./invariants.ts";
import type { PointVortexParams } from "./params.ts";
import { PeriodicKernel } from "./wasm_periodic.ts";
import { velocityDisk, velocityUnbounded } from "./velocity.ts";

/** Runs one realisation, streaming frames and events into `sink`; returns the end scalars. */
export function simulate(input: EngineRunInput<PointVortexParams>, sink: FrameSink): EngineRunSummary {
  const { params, controls, rng } = input;
  checkRunControls(controls, { usesTolerance: true });
  const init = initialVortices(params, rng);
  const dom = params.domain;
  const geometry: DomainGeometry = dom.kind === "disk"
    ? { kind: "disk", radius: dom.radius }
    : dom.kind === "periodic"
    ? { kind: "periodic", side: dom.side }
    : { kind: "unbounded" };
  const side = dom.kind === "periodic" ? dom.side : 0;
  const periodic = side > 0;

  const cap = Math.max(1, init.n);
  let n = init.n;
  const g = new Float64Array(cap);
  const id = new Int32Array(cap);
  g.set(init.g);
  id.set(init.id);
  const wrapX = new Float64Array(cap), wrapY = new Float64Array(cap);
  const ux = new Float64Array(cap), uy = new Float64Array(cap); // unwrapped positions (periodic)

  const dp = new DormandPrince(cap, makeRhs(params, g), {
    relativeTolerance: controls.tolerance,
    absoluteTolerance: params.integrator.absoluteTolerance,
    maxSteps: params.integrator.maxSteps,
  });
  dp.x.set(init.x);
  dp.y.set(init.y);
  if (periodic) wrap(n, dp.x, dp.y, side, wrapX, wrapY);
  dp.start(n, 0);
  let gMax = maxAbs(n, g);

  const search = params.annihilationDistance > 0
    ? new AnnihilationSearch(cap, params.annihilationDistance, geometry)
    : null;
  let annihilations = 0, wallAnnihilations = 0;
  const removedH = new CompensatedSum(), removedQ = new CompensatedSum(), removedP = new CompensatedSum();
  const removedI = new CompensatedSum();
  const mom: Moments = { impulseX: 0, impulseY: 0, angularImpulse: 0, absFirst: 0, absSecond: 0 };

  const unwrapped = (): void => {
    const x = dp.x, y = dp.y;
    for (let i = 0; i < n; i++) {
      ux[i] = x[i] + side * wrapX[i];
      uy[i] = y[i] + side * wrapY[i];
    }
  };

  // Invariants at t = 0 and their drift scales.
  const f = params.friction;
  const conservative = f.alpha === 0 &&
    (f.alphaPrime === 0 || (f.normalVelocity[0] === 0 && f.normalVelocity[1] === 0));
  const minSeparationInitial = minimumSeparation(n, dp.x, dp.y, side);
  unwrapped();
  const h0 = hamiltonian(geometry, n, dp.x, dp.y, g);
  moments(n, periodic ? ux : dp.x, periodic ? uy : dp.y, g, null, mom);
  const q0 = mom.impulseX, p0 = mom.impulseY, i0 = mom.angularImpulse;
  let sumG2 = 0;
  for (let i = 0; i < n; i++) sumG2 += g[i] * g[i];
  const scaleH = nonZero(Math.max(Math.abs(h0), sumG2 / (2 * Math.PI)));
  const scaleP = nonZero(Math.max(Math.hypot(q0, p0), mom.absFirst));
  const scaleI = nonZero(Math.max(Math.abs(i0), mom.absSecond));
  let driftH = 0, driftP = 0, driftI = 0;

  const emit = (index: number): void => {
    let xs = dp.x, ys = dp.y;
    if (periodic) {
      unwrapped();
      xs = ux;
      ys = uy;
    }
    const h = hamiltonian(geometry, n, dp.x, dp.y, g);
    moments(n, xs, ys, g, null, mom);
    driftH = Math.max(driftH, Math.abs(h + removedH.value - h0) / scaleH);
    driftP = Math.max(
      driftP,
      Math.hypot(mom.impulseX + removedQ.value - q0, mom.impulseY + removedP.value - p0) / scaleP,
    );
    driftI = Math.max(driftI, Math.abs(mom.angularImpulse + removedI.value - i0) / scaleI);
    sink.frame({
      index,
      t: dp.t,
      n,
      id,
      x: xs,
      y: ys,
      z: null,
      circulation: g,
      loop: null,
      marker: null,
      diagnostics: {
        hamiltonian: h,
        impulse_x: mom.impulseX,
        impulse_y: mom.impulseY,
        angular_impulse: mom.angularImpulse,
      },
    });
  };

  const removeAnnihilated = (): void => {
    if (search === null || n === 0) return;
    const removedCount = search.find(n, dp.x, dp.y, g, id);
    if (removedCount === 0) return;
    const x = dp.x, y = dp.y, t = dp.t;
    unwrapped();
    const px = periodic ? ux : x, py = periodic ? uy : y;
    removedH.add(removedEnergy(geometry, n, x, y, g, search.removed));
    moments(n, px, py, g, search.removed, mom);
    removedQ.add(mom.impulseX);
    removedP.add(mom.impulseY);
    removedI.add(mom.angularImpulse);
    for (let k = 0; k < search.pairCount; k++) {
      let a = search.pairI[k], b = search.pairJ[k];
      if (id[b] < id[a]) [a, b] = [b, a];
      sink.event({
        t,
        kind: "annihilation",
        ids: [id[a], id[b]],
        data: { x1: px[a], y1: py[a], x2: px[b], y2: py[b], separation: search.pairSeparation[k] },
      });
    }
    for (let k = 0; k < search.wallCount; k++) {
      const i = search.wall[k];
      const radius = dom.kind === "disk" ? dom.radius : 0;
      sink.event({
        t,
        kind: "wall-annihilation",
        ids: [id[i]],
        data: { x: x[i], y: y[i], wallDistance: radius - Math.hypot(x[i], y[i]) },
      });
    }
    annihilations += search.pairCount;
    wallAnnihilations += search.wallCount;
    const removed = search.removed;
    let w = 0;
    for (let r = 0; r < n; r++) {
      if (removed[r] !== 0) continue;
      x[w] = x[r];
      y[w] = y[r];
      g[w] = g[r];
      id[w] = id[r];
      wrapX[w] = wrapX[r];
      wrapY[w] = wrapY[r];
      w++;
    }
    n = w;
    dp.n = n;
    dp.resetFsal();
    gMax = maxAbs(n, g);
  };

  const maxDistance2 = controls.maxDistance * controls.maxDistance;
  const afterStep = (): void => {
    const x = dp.x, y = dp.y;
    if (periodic) wrap(n, x, y, side, wrapX, wrapY);
    for (let i = 0; i < n; i++) {
      const px = x[i] + side * wrapX[i], py = y[i] + side * wrapY[i];
      if (px * px + py * py > maxDistance2) {
        throw new EngineFailure(
          "blow-up",
          `vortex ${id[i]} reached (${px}, ${py}) at t = ${dp.t}, beyond maxDistance ${controls.maxDistance}`,
          dp.t,
        );
      }
    }
    if (dom.kind === "disk") {
      const r2 = dom.radius * dom.radius;
      for (let i = 0; i < n; i++) {
        if (x[i] * x[i] + y[i] * y[i] >= r2) {
          throw new EngineFailure(
            "invalid-state",
            `vortex ${id[i]} reached the disk wall at t = ${dp.t} (r = ${Math.hypot(x[i], y[i])}, R = ` +
              `${dom.radius}); set annihilationDistance > 0 so vortices at the wall annihilate with their image`,
            dp.t,
          );
        }
      }
    }
    removeAnnihilated();
  };

  const dtSample = controls.sampleInterval;
  const frames = Math.floor((controls.duration / dtSample) * (1 + 1e-12));
  const capFactor = params.integrator.stepCapFactor;
  emit(0);
  for (let k = 1; k <= frames; k++) {
    const tk = k * dtSample;
    while (dp.t < tk) {
      input.stop?.check();
      const hCap = n > 0 && gMax > 0 ? capFactor * dp.minSeparation2 / gMax : Infinity;
      dp.step(tk, hCap);
      afterStep();
    }
    emit(k);
  }

  const scalars: Record<string, number> = {
    steps: dp.accepted,
    rejected_steps: dp.rejected,
    rhs_evaluations: dp.evaluations,
    annihilations,
    wall_annihilations: wallAnnihilations,
    initial_count: init.n,
    final_count: n,
  };
  if (init.density !== null) scalars.initial_density = init.density;
  if (Number.isFinite(minSeparationInitial)) scalars.min_separation_initial = minSeparationInitial;
  if (conservative) {
    scalars["drift.hamiltonian"] = driftH;
    if (dom.kind !== "disk") scalars["drift.impulse"] = driftP;
    if (dom.kind !== "periodic") scalars["drift.angular_impulse"] = driftI;
  }
  return { scalars };
}

function makeRhs(params: PointVortexParams, g: Float64Array): PlanarRhs {
  const f = params.friction;
  const friction = f.alpha !== 0 || f.alphaPrime !== 0;
  const d = params.domain;
  switch (d.kind) {
    case "unbounded":
      return friction
        ? (n, x, y, u, v) => {
          const m = velocityUnbounded(n, x, y, g, u, v);
          applyFriction(n, g, u, v, f);
          return m;
        }
        : (n, x, y, u, v) => velocityUnbounded(n, x, y, g, u, v);
    case "disk": {
      const r = d.radius;
      return friction
        ? (n, x, y, u, v) => {
          const m = velocityDisk(n, x, y, g, r, u, v);
          applyFriction(n, g, u, v, f);
          return m;
        }
        : (n, x, y, u, v) => velocityDisk(n, x, y, g, r, u, v);
    }
    case "periodic": {
      // WebAssembly f64x2 kernel of the ζ form (wasm_periodic.ts): ≈ 5× the image series, same values.
      const s = d.side;
      const k = PeriodicKernel.load();
      return friction
        ? (n, x, y, u, v) => {
          const m = k.velocity(n, x, y, g, s, u, v);
          applyFriction(n, g, u, v, f);
          return m;
        }
        : (n, x, y, u, v) => k.velocity(n, x, y, g, s, u, v);
    }
  }
}

/** Wraps positions into [−L/2, L/2)², counting the images crossed. */
function wrap(
  n: number,
  x: Float64Array,
  y: Float64Array,
  side: number,
  kx: Float64Array,
  ky: Float64Array,
): void {
  const half = 0.5 * side;
  for (let i = 0; i < n; i++) {
    const a = Math.floor((x[i] + half) / side);
    if (a !== 0) {
      x[i] -= a * side;
      kx[i] += a;
    }
    const b = Math.floor((y[i] + half) / side);
    if (b !== 0) {
      y[i] -= b * side;
      ky[i] += b;
    }
  }
}

function maxAbs(n: number, g: Float64Array): number {
  let m = 0;
  for (let i = 0; i < n; i++) m = Math.max(m, Math.abs(g[i]));
  return m;
}

function nonZero(s: number): number {
  return s > 0 && Number.isFinite(s) ? s : 1;
}
