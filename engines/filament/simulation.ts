/**
 * One filament simulation: state, RK4 time stepping, and the topology work done between full steps
 * (heater absorption, remeshing, reconnection, loop removal), with every event reported.
 *
 * Step sequence (one call of `advance`):
 *   1. k₁ = f(s) at the current positions; choose dt = min(dtMax, c·h_min²/(κΛ), δ_r/(2 v_max)) with h_min the
 *      smallest spacing, Λ = max(1, ln(h_max/a₀)) and v_max the largest |k₁|;
 *   2. classical RK4 with fixed topology (stages k₂…k₄);
 *   3. wrap positions into the periodic box (image counters), NaN and blow-up guards;
 *   4. heater absorption (points with r < r_h deleted) and remeshing, then compaction (tiny loops < 5 points
 *      or < 3δ removed, far loops removed);
 *   5. reconnection check (Type II), compaction with loop relabelling if anything reconnected.
 *
 * Method (dt): linearising the local term about a straight line gives Kelvin waves ω = (κΛ/4π)k²; the 5-point
 * stencil's largest k² is 16/(3h²) (zig-zag mode), and RK4 is stable on the imaginary axis for |ωdt| ≤ 2.83, so
 * dt ≤ 6.7 h²/(κΛ); the default c = 3 keeps a factor ≈ 2 margin for non-uniform stencils (docs/methods.md §2.4,
 * derived there; the zig-zag test checks it). The advective limit keeps approaching lines from passing through
 * each other between reconnection checks.
 *
 * References: K.W. Schwarz, Phys. Rev. B 38, 2398 (1988), doi:10.1103/PhysRevB.38.2398; D.R. Durran,
 * Numerical Methods for Fluid Dynamics, 2nd ed. (Springer, 2010), doi:10.1007/978-1-4419-6412-0 (RK4 stability
 * region).
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
import { computeGeometry, Geometry } from "./geometry.ts";
import { Reconnector } from "./reconnect.ts";
import type { ReconnectionRecord, ReconnectOptions } from "./reconnect.ts";
import { remesh } from "./remesh.ts";
import type { MarkerTransfer, RemeshOptions } from "./remesh.ts";
import { compactInto, FilamentState, IdCounters, RemovalReason } from "./state.ts";
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
}

/** Filament simulation state and stepper (see module doc). */
export class FilamentSimulation {
  readonly config: SimulationConfig;
  state = new FilamentState(64);
  private spare = new FilamentState(64);
  readonly field: VelocityField;
  /** Geometry of the state after the last topology pass. */
  readonly geo = new Geometry();
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
  private x0 = new Float64Array(0);
  private y0 = new Float64Array(0);
  private z0 = new Float64Array(0);
  private xs = new Float64Array(0);
  private ys = new Float64Array(0);
  private zs = new Float64Array(0);
  private kx = new Float64Array(0);
  private ky = new Float64Array(0);
  private kz = new Float64Array(0);
  private ax = new Float64Array(0);
  private ay = new Float64Array(0);
  private az = new Float64Array(0);
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
    this.x0 = new Float64Array(c);
    this.y0 = new Float64Array(c);
    this.z0 = new Float64Array(c);
    this.xs = new Float64Array(c);
    this.ys = new Float64Array(c);
    this.zs = new Float64Array(c);
    this.kx = new Float64Array(c);
    this.ky = new Float64Array(c);
    this.kz = new Float64Array(c);
    this.ax = new Float64Array(c);
    this.ay = new Float64Array(c);
    this.az = new Float64Array(c);
    this.cap = c;
  }

  /** The stable step for the current state (without the advective limit): c·h_min²/(κΛ). */
  stableStep(): number {
    const s = this.state;
    computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, this.config.velocity.boxSize, this.geo);
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
    const { x0, y0, z0, xs, ys, zs, kx, ky, kz, ax, ay, az } = this;
    const f = this.field;
    f.evaluate(n, s.x, s.y, s.z, s.next, s.prev, kx, ky, kz);
    let dt = dtMax;
    if (!fixedDt) {
      let v2 = 0;
      for (let i = 0; i < n; i++) {
        const q = kx[i] * kx[i] + ky[i] * ky[i] + kz[i] * kz[i];
        if (q > v2) v2 = q;
      }
      if (Number.isNaN(v2)) throw new EngineFailure("nan", `non-finite velocity at t = ${this.t}`, this.t);
      const stable = this.stableStepFrom(f.geo, n);
      const advect = v2 > 0 ? 0.5 * this.config.reconnectionDistance / Math.sqrt(v2) : Infinity;
      dt = Math.min(dtMax, stable, advect);
      if (!(dt > this.config.minStep) && dt < dtMax) {
        throw new EngineFailure(
          "step-underflow",
          `time step underflow (dt = ${dt}) at t = ${this.t}`,
          this.t,
        );
      }
    }
    for (let i = 0; i < n; i++) {
      x0[i] = s.x[i];
      y0[i] = s.y[i];
      z0[i] = s.z[i];
      ax[i] = kx[i];
      ay[i] = ky[i];
      az[i] = kz[i];
      xs[i] = x0[i] + 0.5 * dt * kx[i];
      ys[i] = y0[i] + 0.5 * dt * ky[i];
      zs[i] = z0[i] + 0.5 * dt * kz[i];
    }
    f.evaluate(n, xs, ys, zs, s.next, s.prev, kx, ky, kz);
    for (let i = 0; i < n; i++) {
      ax[i] += 2 * kx[i];
      ay[i] += 2 * ky[i];
      az[i] += 2 * kz[i];
      xs[i] = x0[i] + 0.5 * dt * kx[i];
      ys[i] = y0[i] + 0.5 * dt * ky[i];
      zs[i] = z0[i] + 0.5 * dt * kz[i];
    }
    f.evaluate(n, xs, ys, zs, s.next, s.prev, kx, ky, kz);
    for (let i = 0; i < n; i++) {
      ax[i] += 2 * kx[i];
      ay[i] += 2 * ky[i];
      az[i] += 2 * kz[i];
      xs[i] = x0[i] + dt * kx[i];
      ys[i] = y0[i] + dt * ky[i];
      zs[i] = z0[i] + dt * kz[i];
    }
    f.evaluate(n, xs, ys, zs, s.next, s.prev, kx, ky, kz);
    const h6 = dt / 6;
    for (let i = 0; i < n; i++) {
      s.x[i] = x0[i] + h6 * (ax[i] + kx[i]);
      s.y[i] = y0[i] + h6 * (ay[i] + ky[i]);
      s.z[i] = z0[i] + h6 * (az[i] + kz[i]);
    }
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
      if (cfg.remesh) {
        const s = this.state;
        computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, L, this.geo);
        const r = remesh(s, this.geo, this.remeshOpts, this.ids, this.onTransfer);
        changed = changed || r.inserted + r.removed > 0;
      }
      if (far < Infinity) this.markFarLoops(far);
      compactInto(this.state, this.spare, this.compactPlain);
      this.swap();
      if (!changed) break;
    }
    const s = this.state;
    computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, L, this.geo);
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
        computeGeometry(st.n, st.x, st.y, st.z, st.next, st.prev, L, this.geo);
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
