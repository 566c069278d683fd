/**
 * The right-hand side of the filament equation of motion (Schwarz):
 *
 *   ds/dt = v_s + α s′×(v_n − v_s) − α′ s′×[s′×(v_n − v_s)],   v_s = v_self + v_s,ext,
 *
 * with v_self the desingularised Biot–Savart velocity (`biot_savart.ts`, or the tree code `tree.ts` for the
 * nonlocal part) or the local induction approximation, v_n a prescribed normal-fluid velocity and v_s,ext the
 * matching external superflow (zero net mass flux for a heat current: v_s,ext = −(ρ_n/ρ_s) v_n).
 *
 * Normal flows: at rest; uniform; radial outflow from a heated line along the z axis, v_n(r) = (u_ref r_ref/r) r̂
 * (r the distance to the axis; the heat flux q′ = 2π r ρ s T |v_n| enters only through u_ref·r_ref, so no entropy
 * data are needed — give the normal velocity u_ref at a reference radius r_ref).
 *
 * References: K.W. Schwarz, Phys. Rev. B 38, 2398 (1988), doi:10.1103/PhysRevB.38.2398 (equation of motion);
 * I.M. Khalatnikov, An Introduction to the Theory of Superfluidity (Benjamin, 1965) (two-fluid heat transport
 * q = ρ s T v_n and zero net mass flux).
 *
 * @example
 * ```ts
 * import { FMM_DEFAULTS, VelocityField } from "./velocity.ts";
 * const field = new VelocityField({ kappa: 1, coreRadius: 1e-4, model: "biot-savart", summation: "direct",
 *   treeThreshold: 2048, theta: 0.4, leafSize: 8, fmm: FMM_DEFAULTS, boxSize: 0, alpha: 0, alphaPrime: 0,
 *   normal: { kind: "rest" } });
 * // field.evaluate(n, x, y, z, next, prev, vx, vy, vz);
 * ```
 */
import { addLiaTerm, addLocalTerm, nonlocalDirect, nonlocalDirectPeriodic } from "./biot_savart.ts";
import { computeGeometry, Geometry } from "./geometry.ts";
import type { AccuracyMonitor } from "./accuracy.ts";
import type { NearKernel, SegmentFmm } from "./fmm.ts";
import { FmmThreads } from "./fmm_threads.ts";
import { SegmentTree, SHARED } from "./tree.ts";
import { ThreadPool } from "./thread_pool.ts";

/** Prescribed normal-fluid velocity field. */
export type NormalFlow =
  | { readonly kind: "rest" }
  | { readonly kind: "uniform"; readonly velocity: readonly [number, number, number] }
  | {
    readonly kind: "line-heater";
    /** u_ref·r_ref: normal speed times radius (length²/time). */
    readonly strength: number;
    /** ρ_n/ρ_s for the counter-superflow. */
    readonly normalToSuperRatio: number;
  };

/** Physical and numerical settings of the right-hand side. */
export interface VelocityConfig {
  /** Quantum of circulation κ (length²/time). */
  readonly kappa: number;
  /** Core parameter a₀ (length). */
  readonly coreRadius: number;
  readonly model: "biot-savart" | "lia";
  /**
   * Nonlocal sum: direct; Barnes–Hut tree; fast multipole method (unbounded domain; the tree in a periodic
   * box); or auto = the FMM (periodic: the tree) when n ≥ treeThreshold, else direct.
   */
  readonly summation: "direct" | "tree" | "fmm" | "auto";
  readonly treeThreshold: number;
  /** Barnes–Hut opening parameter θ. */
  readonly theta: number;
  /** Maximum segments per tree leaf. */
  readonly leafSize: number;
  /** Fast multipole settings: expansion order p, opening parameter θ (r_T + b_S < θd), leaf size. */
  readonly fmm: FmmSettings;
  /**
   * Threads inside this realisation (FMM, and the near field of multirate steps; results do not depend on it;
   * default 1).
   */
  readonly threads?: number;
  /** Periodic cube side, 0 for unbounded. */
  readonly boxSize: number;
  readonly alpha: number;
  readonly alphaPrime: number;
  readonly normal: NormalFlow;
}

/** Settings of the fast multipole method (`fmm.ts`). */
export interface FmmSettings {
  readonly order: number;
  readonly theta: number;
  readonly leafSize: number;
  /** Near-field kernel: WebAssembly f32x4 SIMD or f64 TypeScript. */
  readonly nearKernel: NearKernel;
}

/** FMM settings that keep the 99th-percentile error near 4e-4 v_rms on dense ring tangles (fmm_test.ts). */
export const FMM_DEFAULTS: FmmSettings = { order: 5, theta: 0.5, leafSize: 64, nearKernel: "simd-f32" };

/** Evaluates the velocity of all points; owns its geometry and tree work arrays. */
export class VelocityField {
  readonly config: VelocityConfig;
  /** Geometry of the last evaluation. */
  readonly geo = new Geometry(SHARED);
  readonly tree = new SegmentTree();
  /** Worker threads of this field (the FMM's, shared with the multirate near field); started on first use. */
  readonly pool: ThreadPool;
  private fmmThreads: FmmThreads | null = null;
  /** Pair interactions (segment–point and cell–point) of the last evaluation. */
  interactions = 0;

  constructor(config: VelocityConfig) {
    this.config = config;
    this.pool = new ThreadPool(config.threads ?? 1);
  }

  /** The nonlocal summation method used for n points. */
  method(n: number): "direct" | "tree" | "fmm" | "none" {
    const c = this.config;
    if (c.model !== "biot-savart") return "none";
    const fast = c.summation === "tree" || c.summation === "fmm" ||
      (c.summation === "auto" && n >= c.treeThreshold);
    if (!fast) return "direct";
    if (c.boxSize > 0 || c.summation === "tree") return "tree";
    return "fmm";
  }

  /** True when the nonlocal sum of n points would use a tree method (Barnes–Hut or FMM). */
  usesTree(n: number): boolean {
    const m = this.method(n);
    return m === "tree" || m === "fmm";
  }

  /** The FMM of this field (created on first use; its counters describe the last evaluation's own share). */
  get fmm(): SegmentFmm {
    return this.fmmPool().fmm;
  }

  private fmmPool(): FmmThreads {
    if (this.fmmThreads === null) {
      this.fmmThreads = new FmmThreads(this.pool, this.config.fmm.order, this.config.fmm.nearKernel);
      this.tree.useAllocator(SHARED);
    }
    return this.fmmThreads;
  }

  /** Writes ds/dt of the n points into (vx, vy, vz). */
  evaluate(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    next: Int32Array,
    prev: Int32Array,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): void {
    const c = this.config;
    const g = this.geo;
    computeGeometry(n, x, y, z, next, prev, c.boxSize, g);
    for (let i = 0; i < n; i++) vx[i] = vy[i] = vz[i] = 0;
    const cf = c.kappa / (4 * Math.PI);
    if (c.model === "lia") {
      addLiaTerm(n, g.tx, g.ty, g.tz, g.cx, g.cy, g.cz, cf, c.coreRadius, vx, vy, vz);
      this.interactions = 0;
    } else {
      addLocalTerm(0, n, prev, g.tx, g.ty, g.tz, g.cx, g.cy, g.cz, g.len, cf, c.coreRadius, vx, vy, vz);
      this.addNonlocal(n, x, y, z, prev, vx, vy, vz);
    }
    this.finish(n, x, y, vx, vy, vz);
  }

  /**
   * Adds the nonlocal Biot–Savart velocity (direct, tree or FMM) of the n points to (vx, vy, vz); `geo` must
   * hold the geometry of these positions.
   */
  addNonlocal(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    prev: Int32Array,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): void {
    const c = this.config;
    const g = this.geo;
    const L = c.boxSize;
    const cf = c.kappa / (4 * Math.PI);
    const method = this.method(n);
    const monitor = method === "direct" ? null : this.armed;
    this.armed = null;
    if (monitor !== null) {
      if (this.before[0].length < n) {
        this.before = [new Float64Array(n), new Float64Array(n), new Float64Array(n)];
      }
      this.before[0].set(vx.subarray(0, n));
      this.before[1].set(vy.subarray(0, n));
      this.before[2].set(vz.subarray(0, n));
    }
    if (method === "fmm") {
      // One code path for any thread count (the sum lands in a zeroed buffer, then is added), so the
      // thread count never changes a bit of the result.
      const fmm = this.fmmPool();
      this.tree.build(n, x, y, z, g.dx, g.dy, g.dz, g.len, 0, c.fmm.leafSize);
      this.interactions = fmm.velocity(this.tree, n, x, y, z, prev, cf, c.fmm.theta, vx, vy, vz);
    } else if (method === "tree") {
      this.tree.build(n, x, y, z, g.dx, g.dy, g.dz, g.len, L, c.leafSize);
      this.interactions = this.tree.velocity(n, x, y, z, prev, cf, c.theta, vx, vy, vz);
    } else if (L > 0) {
      nonlocalDirectPeriodic(n, x, y, z, prev, g.dx, g.dy, g.dz, L, cf, vx, vy, vz);
      this.interactions = 27 * n * n;
    } else {
      nonlocalDirect(n, x, y, z, prev, g.dx, g.dy, g.dz, cf, vx, vy, vz);
      this.interactions = n * n;
    }
    if (monitor !== null) {
      monitor.check(n, x, y, z, prev, g.dx, g.dy, g.dz, L, cf, this.before, [vx, vy, vz]);
    }
  }

  private armed: AccuracyMonitor | null = null;
  private before: [Float64Array, Float64Array, Float64Array] = [
    new Float64Array(0),
    new Float64Array(0),
    new Float64Array(0),
  ];

  /** Stops worker threads (if any). */
  close(): void {
    this.pool.close();
  }

  /** The next nonlocal sum by a tree method is checked against the exact sum at sampled points. */
  armCheck(monitor: AccuracyMonitor): void {
    this.armed = monitor;
  }

  /**
   * Turns the superfluid velocity in (vx, vy, vz) into ds/dt: adds the external counter-superflow and applies
   * mutual friction with the tangents of `geo`.
   */
  finish(
    n: number,
    x: Float64Array,
    y: Float64Array,
    vx: Float64Array,
    vy: Float64Array,
    vz: Float64Array,
  ): void {
    const g = this.geo;
    applyFlowAndFriction(0, n, this.config, x, y, g.tx, g.ty, g.tz, vx, vy, vz);
  }
}

/** The settings `applyFlowAndFriction` reads. */
export type FrictionSettings = Pick<VelocityConfig, "alpha" | "alphaPrime" | "normal">;

/**
 * `VelocityField.finish` for points i0 … i1 − 1 (tangents t): adds the external counter-superflow to the
 * superfluid velocity in (vx, vy, vz) and applies mutual friction.
 */
export function applyFlowAndFriction(
  i0: number,
  i1: number,
  c: FrictionSettings,
  x: Float64Array,
  y: Float64Array,
  tx: Float64Array,
  ty: Float64Array,
  tz: Float64Array,
  vx: Float64Array,
  vy: Float64Array,
  vz: Float64Array,
): void {
  const nf = c.normal;
  if (nf.kind === "line-heater") {
    // External counter-superflow v_s,ext = −(ρ_n/ρ_s) v_n.
    const k = -nf.normalToSuperRatio * nf.strength;
    for (let i = i0; i < i1; i++) {
      const r2 = x[i] * x[i] + y[i] * y[i];
      if (r2 === 0) continue;
      vx[i] += k * x[i] / r2;
      vy[i] += k * y[i] / r2;
    }
  }
  if (c.alpha === 0 && c.alphaPrime === 0) return;
  const a = c.alpha, ap = c.alphaPrime;
  let unx = 0, uny = 0, unz = 0;
  if (nf.kind === "uniform") {
    unx = nf.velocity[0];
    uny = nf.velocity[1];
    unz = nf.velocity[2];
  }
  const heater = nf.kind === "line-heater" ? nf.strength : 0;
  for (let i = i0; i < i1; i++) {
    let wx = unx, wy = uny, wz = unz;
    if (heater !== 0) {
      const r2 = x[i] * x[i] + y[i] * y[i];
      if (r2 > 0) {
        wx = heater * x[i] / r2;
        wy = heater * y[i] / r2;
        wz = 0;
      }
    }
    // w = v_n − v_s
    wx -= vx[i];
    wy -= vy[i];
    wz -= vz[i];
    const sx = ty[i] * wz - tz[i] * wy, sy = tz[i] * wx - tx[i] * wz, sz = tx[i] * wy - ty[i] * wx; // t×w
    const qx = ty[i] * sz - tz[i] * sy, qy = tz[i] * sx - tx[i] * sz, qz = tx[i] * sy - ty[i] * sx; // t×(t×w)
    vx[i] += a * sx - ap * qx;
    vy[i] += a * sy - ap * qy;
    vz[i] += a * sz - ap * qz;
  }
}
