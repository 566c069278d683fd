/**
 * One filament simulation: state, time stepping (classical RK4 or a multirate scheme), and the topology work
 * done between full steps (heater absorption, remeshing, reconnection, loop removal), with every event reported.
 *
 * Step sequence (one call of `advance`):
 *   1. k₁ = f(s) at the current positions; choose dt = min(dtMax, c·h_min²/(κΛ), δ_r/(2 v_max)) with h_min the
 *      smallest spacing, Λ = max(1, ln(h_max/a₀)) and v_max the largest |k₁|;
 *   2. integration over dt with fixed topology (RK4: stages k₂…k₄; multirate: see below);
 *   3. wrap positions into the periodic box (image counters), NaN and blow-up guards;
 *   4. heater absorption (points with r < r_h deleted) and remeshing, then compaction (tiny loops < 5 points
 *      or < 3δ removed, far loops removed);
 *   5. reconnection check (Type II), compaction with loop relabelling if anything reconnected, then remeshing
 *      again (the swapped connections are short) and compaction.
 *
 * Method (dt): linearising the local term about a straight line gives Kelvin waves ω = (κΛ/4π)k²; the 5-point
 * stencil's largest k² is 16/(3h²) (zig-zag mode), and RK4 is stable on the imaginary axis for |ωdt| ≤ 2.83, so
 * dt ≤ 6.7 h²/(κΛ); the default c = 3 keeps a factor ≈ 2 margin for non-uniform stencils (docs/methods.md §2.4,
 * derived there; the zig-zag test checks it). Remeshing keeps h_min ≥ δ_min (`remesh.ts`). The advective limit
 * keeps approaching lines from passing through each other between reconnection checks.
 *
 * Method (multirate). The right-hand side splits into a cheap, stiff part — the local term, the windowed
 * near field of segments within 2r_w (`near.ts`), external flow and friction — and the expensive far field
 * S = v_nonlocal − v_near = Σ_j (1 − φ(r_ij/r_w)) u_j (own segments lie inside the window, so S does not depend
 * on them: it is smooth along the line and interpolates well onto points inserted by remeshing). Nothing in S
 * may respond to mesh-scale modes, which oscillate at the fast rate and cannot be extrapolated: an earlier
 * version that moved the spacing part of the local term into S was unstable at order 4 (the zig-zag Kelvin
 * modes of a shrinking ring grew ×10³ per time unit). S is evaluated once per step at the step's start
 * (one tree/FMM sum instead of RK4's four) and stored per point; inside the step each point's S is the
 * Lagrange extrapolation through its last `order` values (an Adams–Bashforth-type predictor), while the
 * cheap part is integrated with RK4 substeps of at most the stable step. The global order equals `order`
 * (checked by the self-convergence test). Memory follows the points: remeshing interpolates it onto new
 * points; reconnections and heater absorption clear it for the points within 4 links, which restart at
 * order 1; the first steps are classical RK4 steps until `order` levels exist. Advective limit of the
 * multirate steps: instead of v_max·dt ≤ δ_r/2 for every point, relative displacements are bounded pairwise.
 * A pair in the near list that may reconnect (≥ 4 links apart or on different loops), at distance d and
 * relative speed w, keeps w·dt ≤ δ_r + d: if it meets within the step, that happens no earlier than d/w, and
 * by the step's end it has passed by at most w·dt − d ≤ δ_r, so the reconnection check still finds it — the
 * guarantee of the global rule, without letting a fast pair that is far apart, or a fast cusp with no line
 * nearby (the usual recoil after a reconnection), set the step of the whole tangle. Every pair is also kept
 * from closing in by more than the list's skin (1.5δ), so the list stays complete. The far field, once the
 * near window is removed, hardly responds to mesh-scale oscillations, so its extrapolation is stable at the
 * local term's stable step and up to 2× it (measured on the zig-zag test; the default `slowFactor` 2 uses
 * that: one far-field evaluation per two stable substeps when the advective limits allow); larger ratios
 * alias the fast Kelvin modes into the extrapolation and grow.
 *
 * References: K.W. Schwarz, Phys. Rev. B 38, 2398 (1988), doi:10.1103/PhysRevB.38.2398; D.R. Durran,
 * Numerical Methods for Fluid Dynamics, 2nd ed. (Springer, 2010), doi:10.1007/978-1-4419-6412-0 (RK4 stability
 * region); E. Hairer, S.P. Nørsett, G. Wanner, Solving Ordinary Differential Equations I, 2nd ed. (Springer,
 * 1993) §III.1 (Adams methods, variable steps); C.W. Gear, D.R. Wells, "Multirate linear multistep methods",
 * BIT 24, 484 (1984), doi:10.1007/BF01934907 (multirate stepping).
 *
 * @example
 * ```ts
 * import { FilamentSimulation } from "./simulation.ts";
 * // const sim = new FilamentSimulation(config, loops, (e) => sink.event(e));
 * // while (sim.t < 1) sim.advance(1 - sim.t);
 * ```
 */
import { EngineFailure } from "../contract.ts";
import type { EngineEvent } from "../contract.ts";
import { Geometry, geometryArrays, type GeometryTask, runGeometry, segmentVectors } from "./geometry.ts";
import { FastRhsScratch, type FastRhsTask, runFastRhs } from "./fast_rhs.ts";
import { Reconnector } from "./reconnect.ts";
import type { ReconnectionRecord, ReconnectOptions } from "./reconnect.ts";
import { remesh } from "./remesh.ts";
import type { MarkerTransfer, RemeshOptions } from "./remesh.ts";
import { compactInto, FilamentState, HIST_LEVELS, HIST_STRIDE, IdCounters, RemovalReason } from "./state.ts";
import { NearField } from "./near.ts";
import { SHARED } from "./_alloc.ts";
import { type AccuracyCheckSettings, AccuracyMonitor } from "./accuracy.ts";
import type { CompactOptions, RemovedLoop } from "./state.ts";
import { type VelocityConfig, VelocityField } from "./velocity.ts";

/** Everything the simulation needs besides the initial loops. */
export interface SimulationConfig {
  readonly velocity: VelocityConfig;
  /** δ = δ_max, the target spacing (length). */
  readonly resolution: number;
  /** δ_min (length). */
  readonly minSpacing: number;
  /** δ_r (length). */
  readonly reconnectionDistance: number;
  /** c in dt = c·h_min²/(κΛ). */
  readonly dtFactor: number;
  readonly remesh: boolean;
  readonly reconnect: boolean;
  /** Marker every m points of each initial loop. */
  readonly markerEvery: number;
  /** Heater radius r_h (points inside are deleted; 0 = no heater). */
  readonly heaterRadius: number;
  /** Loops whose centroid is farther than this from the origin are removed (Infinity = never). */
  readonly removeBeyond: number;
  /** EngineFailure("blow-up") when a point gets farther than this from the origin. */
  readonly maxDistance: number;
  /** EngineFailure("invalid-state") when the point count exceeds this. */
  readonly maxPoints: number;
  /** EngineFailure("step-underflow") when the chosen step falls below this (time). */
  readonly minStep: number;
  /** Time integration (see module doc). */
  readonly integrator: IntegratorConfig;
  /** Run-time check of the tree/FMM sum against the exact sum (`accuracy.ts`); absent = off. */
  readonly accuracyCheck?: AccuracyCheckSettings;
}

/**
 * Time integrator: classical RK4 on the whole right-hand side, or the multirate scheme (module doc) with
 * polynomial extrapolation of the given order for the nonlocal velocity and the slow step limited to
 * `slowFactor` times the local term's stable step.
 */
export type IntegratorConfig =
  | { readonly kind: "rk4" }
  | {
    readonly kind: "multirate";
    readonly order: number;
    readonly slowFactor: number;
    /** Near-field window radius r_w in units of δ (the fast part sums segments within 2r_w). */
    readonly window: number;
  };

/** Skin of the near-field pair list in units of δ: no pair approaches by more within one step. */
const NEAR_SKIN = 1.5;
/** Points fewer links apart on one loop never reconnect (`reconnect.ts`). */
const RECONNECT_MIN_LINKS = 4;

/** Default integrator: multirate, order 4, steps up to twice the local term's stable step, window 2δ. */
export const INTEGRATOR_DEFAULTS = { kind: "multirate", order: 4, slowFactor: 2, window: 2 } as const;

/** Filament simulation state and stepper (see module doc). */
export class FilamentSimulation {
  readonly config: SimulationConfig;
  state = new FilamentState(64);
  private spare = new FilamentState(64);
  readonly field: VelocityField;
  /** Sampled errors of the fast nonlocal sum (null when the check is off). */
  readonly accuracy: AccuracyMonitor | null;
  /** Geometry of the state after the last topology pass. */
  readonly geo = new Geometry(SHARED);
  readonly ids = new IdCounters();
  private readonly reconnector = new Reconnector();
  private readonly emit: (e: EngineEvent) => void;
  t = 0;
  steps = 0;
  reconnections = 0;
  loopsRemoved = 0;
  lengthRemoved = 0;
  markerTransfers = 0;
  /** Last step size. */
  lastDt = 0;
  private cap = 0;
  private x0: Float64Array = new Float64Array(0);
  private y0: Float64Array = new Float64Array(0);
  private z0: Float64Array = new Float64Array(0);
  private xs: Float64Array = new Float64Array(0);
  private ys: Float64Array = new Float64Array(0);
  private zs: Float64Array = new Float64Array(0);
  private kx: Float64Array = new Float64Array(0);
  private ky: Float64Array = new Float64Array(0);
  private kz: Float64Array = new Float64Array(0);
  private ax: Float64Array = new Float64Array(0);
  private ay: Float64Array = new Float64Array(0);
  private az: Float64Array = new Float64Array(0);
  private relabel = new Uint8Array(0);

  /**
   * Builds the state from closed loops (points in order, unwrapped coordinates) and brings the spacing into
   * [δ_min, δ_max] (remeshing repeated until nothing changes), removing tiny loops.
   */
  constructor(
    config: SimulationConfig,
    loops: ReadonlyArray<ReadonlyArray<readonly [number, number, number]>>,
    emit: (e: EngineEvent) => void,
  ) {
    this.config = config;
    this.emit = emit;
    this.field = new VelocityField(config.velocity);
    this.near.usePool(this.field.pool);
    this.reconnector.usePool(this.field.pool);
    const ac = config.accuracyCheck;
    this.accuracy = ac !== undefined && ac.every > 0 ? new AccuracyMonitor(ac) : null;
    const L = config.velocity.boxSize;
    for (const loop of loops) {
      const s0 = this.state.n;
      this.state.appendLoop(loop, this.ids, config.markerEvery);
      if (L > 0) {
        for (let s = s0; s < this.state.n; s++) {
          const wx = Math.floor(this.state.x[s] / L + 0.5), wy = Math.floor(this.state.y[s] / L + 0.5);
          const wz = Math.floor(this.state.z[s] / L + 0.5);
          this.state.x[s] -= wx * L;
          this.state.y[s] -= wy * L;
          this.state.z[s] -= wz * L;
          this.state.imx[s] = wx;
          this.state.imy[s] = wy;
          this.state.imz[s] = wz;
        }
      }
    }
    this.topology(true);
  }

  /** Sets the velocity into (vx, vy, vz) for the current state (arrays of length ≥ n). */
  velocityOf(vx: Float64Array, vy: Float64Array, vz: Float64Array): void {
    const s = this.state;
    this.field.evaluate(s.n, s.x, s.y, s.z, s.next, s.prev, vx, vy, vz);
  }

  private ensure(n: number): void {
    if (n <= this.cap) return;
    let c = Math.max(64, this.cap);
    while (c < n) c *= 2;
    // On shared memory: the near field's threads read positions and geometry and write velocities.
    this.x0 = SHARED.f64(c);
    this.y0 = SHARED.f64(c);
    this.z0 = SHARED.f64(c);
    this.xs = SHARED.f64(c);
    this.ys = SHARED.f64(c);
    this.zs = SHARED.f64(c);
    this.kx = SHARED.f64(c);
    this.ky = SHARED.f64(c);
    this.kz = SHARED.f64(c);
    this.ax = SHARED.f64(c);
    this.ay = SHARED.f64(c);
    this.az = SHARED.f64(c);
    this.cap = c;
  }

  /** `computeGeometry` with the tangents and curvature by chunks on the thread pool (g on shared memory). */
  private geometry(s: FilamentState, boxSize: number, g: Geometry): void {
    segmentVectors(s.n, s.x, s.y, s.z, s.next, boxSize, g);
    const task: GeometryTask = {
      kind: "geometry",
      n: s.n,
      next: s.next,
      prev: s.prev,
      geo: geometryArrays(g),
    };
    const pool = this.field.pool;
    pool.run(task, () => runGeometry(task, pool.control, g.nodes, g.weights));
  }

  /** The stable step for the current state (without the advective limit): c·h_min²/(κΛ). */
  stableStep(): number {
    const s = this.state;
    this.geometry(s, this.config.velocity.boxSize, this.geo);
    return this.stableStepFrom(this.geo, s.n);
  }

  private stableStepFrom(g: Geometry, n: number): number {
    let hmin = Infinity, hmax = 0;
    for (let i = 0; i < n; i++) {
      const l = g.len[i];
      if (l < hmin) hmin = l;
      if (l > hmax) hmax = l;
    }
    const v = this.config.velocity;
    const lam = Math.max(1, Math.log(hmax / v.coreRadius));
    return this.config.dtFactor * hmin * hmin / (v.kappa * lam);
  }

  /**
   * Advances by one full step of at most dtMax (plus the topology pass); returns the step taken. With
   * `fixedDt` the step is exactly dtMax (convergence tests), otherwise the stable and advective limits apply.
   */
  advance(dtMax: number, fixedDt = false): number {
    const s = this.state;
    const n = s.n;
    if (n === 0) {
      this.t += dtMax;
      this.lastDt = dtMax;
      return dtMax;
    }
    this.ensure(n);
    if (this.accuracy !== null && this.accuracy.due(this.steps)) this.field.armCheck(this.accuracy);
    const integ = this.config.integrator;
    if (integ.kind === "multirate" && this.config.velocity.model === "biot-savart") {
      return this.advanceMultirate(dtMax, fixedDt, integ.order, integ.slowFactor, integ.window);
    }
    const { kx, ky, kz } = this;
    const f = this.field;
    f.evaluate(n, s.x, s.y, s.z, s.next, s.prev, kx, ky, kz);
    let dt = dtMax;
    if (!fixedDt) {
      const stable = this.stableStepFrom(f.geo, n);
      const advect = 0.5 * this.config.reconnectionDistance / Math.sqrt(this.maxSpeed2());
      dt = this.checkedStep(Math.min(dtMax, stable, advect), dtMax);
    }
    this.rk4Step(dt, this.t, 0);
    this.t += dt;
    this.steps++;
    this.lastDt = dt;
    this.wrapAndGuard();
    this.topology(false);
    return dt;
  }

  /** Largest squared speed in (kx, ky, kz); EngineFailure on NaN. */
  private maxSpeed2(): number {
    const { kx, ky, kz } = this;
    let v2 = 0;
    for (let i = 0; i < this.state.n; i++) {
      const q = kx[i] * kx[i] + ky[i] * ky[i] + kz[i] * kz[i];
      if (q > v2) v2 = q;
    }
    if (Number.isNaN(v2)) throw new EngineFailure("nan", `non-finite velocity at t = ${this.t}`, this.t);
    return v2;
  }

  /** The step dt, or EngineFailure("step-underflow") when it falls below minStep short of dtMax. */
  private checkedStep(dt: number, dtMax: number): number {
    if (!(dt > this.config.minStep) && dt < dtMax) {
      throw new EngineFailure("step-underflow", `time step underflow (dt = ${dt}) at t = ${this.t}`, this.t);
    }
    return dt;
  }

  /**
   * One classical RK4 step of size h from time tq with k₁ in (kx, ky, kz): stages by the full right-hand side
   * (order 0) or by the multirate fast right-hand side with far-field extrapolation of the given order.
   */
  private rk4Step(h: number, tq: number, order: number): void {
    const s = this.state, n = s.n, f = this.field;
    const { x0, y0, z0, xs, ys, zs, kx, ky, kz, ax, ay, az } = this;
    for (let i = 0; i < n; i++) {
      x0[i] = s.x[i];
      y0[i] = s.y[i];
      z0[i] = s.z[i];
      ax[i] = kx[i];
      ay[i] = ky[i];
      az[i] = kz[i];
      xs[i] = x0[i] + 0.5 * h * kx[i];
      ys[i] = y0[i] + 0.5 * h * ky[i];
      zs[i] = z0[i] + 0.5 * h * kz[i];
    }
    for (let stage = 2; stage <= 4; stage++) {
      if (order === 0) {
        f.evaluate(n, xs, ys, zs, s.next, s.prev, kx, ky, kz);
        if (this.config.integrator.kind === "multirate") this.slowEvaluations++;
      } else this.fastRhs(xs, ys, zs, stage === 4 ? tq + h : tq + 0.5 * h, order, kx, ky, kz);
      const wgt = stage === 4 ? 1 : 2;
      const c = stage === 3 ? h : 0.5 * h;
      for (let i = 0; i < n; i++) {
        ax[i] += wgt * kx[i];
        ay[i] += wgt * ky[i];
        az[i] += wgt * kz[i];
        xs[i] = x0[i] + c * kx[i];
        ys[i] = y0[i] + c * ky[i];
        zs[i] = z0[i] + c * kz[i];
      }
    }
    const h6 = h / 6;
    for (let i = 0; i < n; i++) {
      s.x[i] = x0[i] + h6 * ax[i];
      s.y[i] = y0[i] + h6 * ay[i];
      s.z[i] = z0[i] + h6 * az[i];
    }
  }

  // ---- multirate stepping -------------------------------------------------------------------------------
  /** Physical history slot of the newest slow level, number of valid global levels, and their times. */
  private hHead = 0;
  private hLevels = 0;
  private readonly hTimes = new Float64Array(HIST_LEVELS);
  /** Extrapolation weights: row o − 1 (order o = 1…HIST_LEVELS), column j = level j (0 newest). */
  private readonly hWeights = new Float64Array(HIST_LEVELS * HIST_LEVELS);
  /** Slot of level j. */
  private readonly hSlot = new Int32Array(HIST_LEVELS);
  private readonly near = new NearField();
  /** Per point (compact state, shared memory): loop number, position in the loop and the loop's length. */
  private loopIndex: Int32Array = new Int32Array(0);
  private loopLength: Int32Array = new Int32Array(0);
  private loopNumber: Int32Array = new Int32Array(0);

  /**
   * Longest step for which no listed pair that may reconnect closes in by more than δ_r plus its distance
   * (first-stage velocities kx…; module doc).
   */
  private approachStep(): number {
    const s = this.state, n = s.n;
    if (this.loopIndex.length < n) {
      this.loopIndex = SHARED.i32(this.cap);
      this.loopLength = SHARED.i32(this.cap);
      this.loopNumber = SHARED.i32(this.cap);
    }
    for (let k = 0; k < s.nLoops; k++) {
      const s0 = s.loopStart[k], m = s.loopLen[k];
      for (let q = 0; q < m; q++) {
        this.loopIndex[s0 + q] = q;
        this.loopLength[s0 + q] = m;
        this.loopNumber[s0 + q] = k;
      }
    }
    return this.near.approachStep(
      n,
      s.x,
      s.y,
      s.z,
      this.kx,
      this.ky,
      this.kz,
      this.loopNumber,
      this.loopIndex,
      this.loopLength,
      RECONNECT_MIN_LINKS,
      this.config.reconnectionDistance,
    );
  }
  /** Slow (nonlocal) evaluations and fast substeps of the last step. */
  lastSubsteps = 0;
  slowEvaluations = 0;

  /**
   * Evaluates the slow velocity S = v_nonlocal − v_near (the far field beyond the near window) at the current
   * positions and pushes it as the newest level of every point's integrator memory (time t).
   */
  private pushSlowLevel(window: number): void {
    const s = this.state, n = s.n, f = this.field, g = f.geo;
    const v = this.config.velocity;
    this.geometry(s, v.boxSize, g);
    const { kx, ky, kz } = this;
    for (let i = 0; i < n; i++) kx[i] = ky[i] = kz[i] = 0;
    f.addNonlocal(n, s.x, s.y, s.z, s.prev, kx, ky, kz);
    this.slowEvaluations++;
    const cf = v.kappa / (4 * Math.PI);
    // Near field (fast part): Verlet list with a skin of NEAR_SKIN·δ (no pair approaches by more within a step).
    this.near.build(
      n,
      s.x,
      s.y,
      s.z,
      s.next,
      s.prev,
      v.boxSize,
      window * this.config.resolution,
      NEAR_SKIN * this.config.resolution,
    );
    this.near.add(this.near.addTask(n, s.x, s.y, s.z, g.dx, g.dy, g.dz, -cf, kx, ky, kz));
    this.hHead = (this.hHead + 1) % HIST_LEVELS;
    this.hTimes[this.hHead] = this.t;
    this.hLevels = Math.min(this.hLevels + 1, HIST_LEVELS);
    const h = s.hist, hc = s.histCount;
    const o = 3 * this.hHead;
    for (let i = 0; i < n; i++) {
      const b = i * HIST_STRIDE + o;
      h[b] = kx[i];
      h[b + 1] = ky[i];
      h[b + 2] = kz[i];
      hc[i] = Math.min(hc[i] + 1, HIST_LEVELS);
    }
  }

  /** Lagrange extrapolation weights of the slow levels at time tau, for every order ≤ hLevels. */
  private extrapolationWeights(tau: number): void {
    const K = HIST_LEVELS, w = this.hWeights, T = this.hTimes, slot = this.hSlot;
    for (let j = 0; j < K; j++) slot[j] = (this.hHead - j + K) % K;
    for (let o = 1; o <= this.hLevels; o++) {
      for (let j = 0; j < o; j++) {
        let p = 1;
        const tj = T[slot[j]];
        for (let m = 0; m < o; m++) if (m !== j) p *= (tau - T[slot[m]]) / (tj - T[slot[m]]);
        w[(o - 1) * K + j] = p;
      }
    }
  }

  /**
   * Fast right-hand side at positions (px, py, pz) and time tau: the local term, the windowed near field and
   * each point's extrapolated far field, then external flow and friction.
   */
  private fastRhs(
    px: Float64Array,
    py: Float64Array,
    pz: Float64Array,
    tau: number,
    order: number,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): void {
    const s = this.state, n = s.n, f = this.field, g = f.geo;
    const v = this.config.velocity;
    // Segment vectors of all points first (the chunks read their neighbours'), the rest by chunks of points.
    segmentVectors(n, px, py, pz, s.next, v.boxSize, g);
    this.extrapolationWeights(tau);
    const cf = v.kappa / (4 * Math.PI);
    const task: FastRhsTask = {
      kind: "fast-rhs",
      n,
      x: px,
      y: py,
      z: pz,
      next: s.next,
      prev: s.prev,
      geo: geometryArrays(g),
      cf,
      a0: v.coreRadius,
      near: this.near.addTask(n, px, py, pz, g.dx, g.dy, g.dz, cf, vx, vy, vz),
      hist: s.hist,
      histCount: s.histCount,
      weights: this.hWeights,
      slot: this.hSlot,
      order,
      levels: HIST_LEVELS,
      stride: HIST_STRIDE,
      friction: { alpha: v.alpha, alphaPrime: v.alphaPrime, normal: v.normal },
      vx,
      vy,
      vz,
    };
    const pool = f.pool;
    pool.run(task, () => runFastRhs(task, pool.control, this.scratch));
  }
  private readonly scratch = new FastRhsScratch();

  /**
   * One multirate step (module doc): one slow evaluation, then RK4 substeps of the fast system. While fewer
   * than `order` slow levels exist (start), the step is a classical RK4 step with full evaluations.
   */
  private advanceMultirate(
    dtMax: number,
    fixedDt: boolean,
    order: number,
    slowFactor: number,
    window: number,
  ): number {
    const s = this.state;
    const n = s.n;
    const f = this.field;
    const { kx, ky, kz } = this;
    this.pushSlowLevel(window);
    const starting = this.hLevels < order;
    // First stage (t_n): the full right-hand side, equal to the classical one.
    this.fastRhs(s.x, s.y, s.z, this.t, order, kx, ky, kz);
    const fast = this.stableStepFrom(f.geo, n);
    let dt = dtMax;
    if (!fixedDt) {
      // Advective limits (module doc): no pair may approach by more than the near list's skin (so the list
      // stays complete), and no pair that could reconnect by more than δ_r plus its distance (so none passes
      // through another between reconnection checks).
      const skin = this.config.resolution * NEAR_SKIN;
      const list = 0.5 * skin / Math.sqrt(this.maxSpeed2());
      const approach = this.approachStep();
      dt = this.checkedStep(Math.min(dtMax, starting ? fast : slowFactor * fast, list, approach), dtMax);
    }
    const m = starting ? 1 : Math.max(1, Math.ceil(dt / fast * (1 - 1e-12)));
    const h = dt / m;
    const t0 = this.t;
    for (let q = 0; q < m; q++) {
      const tq = t0 + q * h;
      if (q > 0) this.fastRhs(s.x, s.y, s.z, tq, order, kx, ky, kz);
      this.rk4Step(h, tq, starting ? 0 : order);
    }
    this.lastSubsteps = m;
    this.t += dt;
    this.steps++;
    this.lastDt = dt;
    this.wrapAndGuard();
    this.topology(false);
    return dt;
  }

  /** Wraps into the periodic box (updating image counters) and applies the NaN and blow-up guards. */
  private wrapAndGuard(): void {
    const s = this.state;
    const L = this.config.velocity.boxSize;
    const maxD2 = this.config.maxDistance * this.config.maxDistance;
    for (let i = 0; i < s.n; i++) {
      if (!Number.isFinite(s.x[i] + s.y[i] + s.z[i])) {
        throw new EngineFailure("nan", `non-finite position of point ${s.id[i]} at t = ${this.t}`, this.t);
      }
      if (L > 0) {
        const wx = Math.floor(s.x[i] / L + 0.5),
          wy = Math.floor(s.y[i] / L + 0.5),
          wz = Math.floor(s.z[i] / L + 0.5);
        if (wx !== 0 || wy !== 0 || wz !== 0) {
          s.x[i] -= wx * L;
          s.y[i] -= wy * L;
          s.z[i] -= wz * L;
          s.imx[i] += wx;
          s.imy[i] += wy;
          s.imz[i] += wz;
        }
      }
      const ux = s.x[i] + L * s.imx[i], uy = s.y[i] + L * s.imy[i], uz = s.z[i] + L * s.imz[i];
      if (ux * ux + uy * uy + uz * uz > maxD2) {
        throw new EngineFailure(
          "blow-up",
          `point ${
            s.id[i]
          } is farther than maxDistance = ${this.config.maxDistance} from the origin at t = ${this.t}`,
          this.t,
        );
      }
    }
  }

  private swap(): void {
    const a = this.state;
    this.state = this.spare;
    this.spare = a;
  }

  private removedLoop(r: RemovedLoop, reason: number): void {
    this.loopsRemoved++;
    this.lengthRemoved += r.length;
    this.emit({
      t: this.t,
      kind: "loop-removal",
      ids: r.markerIds,
      data: { loop: r.loopId, points: r.points, length_removed: r.length, reason, x: r.cx, y: r.cy, z: r.cz },
    });
  }

  // Reused between steps (no allocation per step besides event objects).
  private readonly records: ReconnectionRecord[] = [];
  private readonly pending: RemovedLoop[] = [];
  private readonly onTiny = (r: RemovedLoop) => this.removedLoop(r, RemovalReason.Tiny);
  private readonly onPending = (r: RemovedLoop) => {
    this.pending.push(r);
  };
  private readonly onRecord = (r: ReconnectionRecord) => {
    this.records.push(r);
  };
  private readonly onTransfer = (tr: MarkerTransfer) => {
    this.markerTransfers++;
    this.emit({
      t: this.t,
      kind: "marker-transfer",
      ids: [tr.markerId],
      data: { jump: tr.jump, receiver_old_id: tr.receiverOldId },
    });
  };
  private compactPlain: CompactOptions | null = null;
  private compactRelabel: CompactOptions | null = null;
  private remeshOpts: RemeshOptions | null = null;
  private reconnectOpts: ReconnectOptions | null = null;

  /** Heater absorption, remeshing, compaction, reconnection (see module doc). */
  private topology(initial: boolean): void {
    const cfg = this.config;
    const L = cfg.velocity.boxSize;
    const far = cfg.removeBeyond;
    const base = { boxSize: L, minPoints: 5, minLength: 3 * cfg.resolution, ids: this.ids };
    this.compactPlain ??= { ...base, relabel: null, onRemoved: this.onTiny };
    this.remeshOpts ??= { minSpacing: cfg.minSpacing, maxSpacing: cfg.resolution, boxSize: L };
    this.reconnectOpts ??= { distance: cfg.reconnectionDistance, boxSize: L };
    const passes = initial ? 12 : 1;
    for (let pass = 0; pass < passes; pass++) {
      let changed = false;
      if (cfg.heaterRadius > 0) changed = this.absorbInHeater() || changed;
      if (cfg.remesh) changed = this.remeshPass() || changed;
      if (far < Infinity) this.markFarLoops(far);
      compactInto(this.state, this.spare, this.compactPlain);
      this.swap();
      if (!changed) break;
    }
    const s = this.state;
    this.geometry(s, L, this.geo);
    if (cfg.reconnect && !initial && s.n > 0) {
      if (this.relabel.length < s.n) {
        this.relabel = new Uint8Array(Math.max(s.n, 2 * this.relabel.length));
        this.compactRelabel = null;
      }
      this.compactRelabel ??= { ...base, relabel: this.relabel, onRemoved: this.onPending };
      this.relabel.fill(0, 0, s.n);
      this.records.length = 0;
      const count = this.reconnector.run(s, this.geo, this.reconnectOpts, this.relabel, this.onRecord);
      if (count > 0) {
        this.reconnections += count;
        // Emit reconnections before the removals that compaction may cause.
        this.pending.length = 0;
        compactInto(s, this.spare, this.compactRelabel);
        this.swap();
        const st = this.state;
        for (const r of this.records) {
          let la = -1, lb = -1;
          for (let i = 0; i < st.n; i++) {
            if (st.id[i] === r.idA) la = st.loopOf[i];
            if (st.id[i] === r.idB) lb = st.loopOf[i];
          }
          this.emit({
            t: this.t,
            kind: "reconnection",
            ids: [r.idA, r.idB],
            data: {
              x: r.x,
              y: r.y,
              z: r.z,
              separation: r.separation,
              length_removed: -r.lengthChange,
              loop_a_before: r.loopA,
              loop_b_before: r.loopB,
              loop_a_after: la,
              loop_b_after: lb,
            },
          });
        }
        for (const r of this.pending) this.removedLoop(r, RemovalReason.Tiny);
        this.geometry(st, L, this.geo);
        // The swapped connections are as short as the lines were close (down to ~δ_r/10): remesh them now,
        // or the next step's stable step c·h_min²/(κΛ) would shrink with them.
        if (cfg.remesh && this.remeshPass()) {
          compactInto(this.state, this.spare, this.compactPlain);
          this.swap();
          const s2 = this.state;
          this.geometry(s2, L, this.geo);
        }
      }
    }
    if (this.state.n > cfg.maxPoints) {
      throw new EngineFailure(
        "invalid-state",
        `point count ${this.state.n} exceeds the cap maxPoints = ${cfg.maxPoints} at t = ${this.t} ` +
          `(raise numerics.maxPoints or coarsen the resolution)`,
        this.t,
      );
    }
  }

  /**
   * Remeshing of the current (linked) state; new points that land inside the heater (on a chord that crosses
   * it) are absorbed at once, so no point starts a step inside the wire. True if anything changed.
   */
  private remeshPass(): boolean {
    const s = this.state, cfg = this.config;
    this.geometry(s, cfg.velocity.boxSize, this.geo);
    const r = remesh(s, this.geo, this.remeshOpts!, this.ids, this.onTransfer);
    let changed = r.inserted + r.removed > 0;
    if (cfg.heaterRadius > 0 && r.inserted > 0) changed = this.absorbInHeater() || changed;
    return changed;
  }

  /** Deletes points inside the heater (r < r_h from the z axis), reporting each; true if any. */
  private absorbInHeater(): boolean {
    const s = this.state;
    const rh2 = this.config.heaterRadius * this.config.heaterRadius;
    const L = this.config.velocity.boxSize;
    let any = false;
    for (let i = 0; i < s.n; i++) {
      if (!s.alive[i] || s.x[i] * s.x[i] + s.y[i] * s.y[i] >= rh2) continue;
      const p = s.prev[i], q = s.next[i];
      if (p === i || s.next[q] === i) continue; // keep ≥ 2 points; compaction removes the loop
      const d = (a: number, b: number) => {
        let ex = s.x[b] - s.x[a], ey = s.y[b] - s.y[a], ez = s.z[b] - s.z[a];
        if (L > 0) {
          ex -= L * Math.round(ex / L);
          ey -= L * Math.round(ey / L);
          ez -= L * Math.round(ez / L);
        }
        return Math.sqrt(ex * ex + ey * ey + ez * ez);
      };
      const removed = d(p, i) + d(i, q) - d(p, q);
      s.next[p] = q;
      s.prev[q] = p;
      s.alive[i] = 0;
      s.histCount[p] = s.histCount[q] = 0; // their own segments changed: integrator memory restarts
      this.lengthRemoved += removed;
      this.emit({
        t: this.t,
        kind: "heater-absorption",
        ids: [s.id[i]],
        data: { length_removed: removed, marker: s.marker[i], loop: s.loopOf[i] },
      });
      any = true;
    }
    return any;
  }

  /** Marks loops whose length-weighted centroid lies beyond `far` as dead (compaction then drops them). */
  private markFarLoops(far: number): void {
    const s = this.state;
    const L = this.config.velocity.boxSize;
    // The state may hold appended slots; use a traversal from each live slot in a loop-start position.
    for (let k = 0; k < s.nLoops; k++) {
      const s0 = s.loopStart[k];
      let i0 = -1;
      for (let q = 0; q < s.loopLen[k]; q++) {
        if (s.alive[s0 + q]) {
          i0 = s0 + q;
          break;
        }
      }
      if (i0 < 0) continue;
      let cx = 0, cy = 0, cz = 0, w = 0;
      let i = i0;
      do {
        const ux = s.x[i] + L * s.imx[i], uy = s.y[i] + L * s.imy[i], uz = s.z[i] + L * s.imz[i];
        cx += ux;
        cy += uy;
        cz += uz;
        w++;
        i = s.next[i];
      } while (i !== i0);
      cx /= w;
      cy /= w;
      cz /= w;
      if (cx * cx + cy * cy + cz * cz <= far * far) continue;
      const markerIds: number[] = [];
      let len = 0;
      i = i0;
      do {
        const j = s.next[i];
        let ex = s.x[j] - s.x[i], ey = s.y[j] - s.y[i], ez = s.z[j] - s.z[i];
        if (L > 0) {
          ex -= L * Math.round(ex / L);
          ey -= L * Math.round(ey / L);
          ez -= L * Math.round(ez / L);
        }
        len += Math.sqrt(ex * ex + ey * ey + ez * ez);
        if (s.marker[i]) markerIds.push(s.id[i]);
        s.alive[i] = 0;
        i = j;
      } while (i !== i0);
      this.removedLoop(
        { loopId: s.loopOf[i0], points: w, length: len, markerIds, cx, cy, cz },
        RemovalReason.Escaped,
      );
    }
  }
}
