/**
 * Adaptive Dormand–Prince 5(4) integrator for planar point-vortex systems (state: x[0..n), y[0..n)).
 *
 * Method: the explicit embedded Runge–Kutta pair DOPRI5 (7 stages, FSAL: the last stage of an accepted step is
 * the first of the next, so 6 right-hand-side evaluations per step). The local error estimate is measured in
 * the max norm over both coordinates of every vortex (one close pair is not diluted by many quiet vortices),
 * err = max_i |e_i| / (atol + rtol·d_min), with d_min the minimum separation at the start of the step: for
 * point vortices the energy error of a close pair is ≈ (κ²/2π)·δd/d, so position errors must be small relative
 * to d_min, not to the distance from the origin (docs/methods.md §1.2), and the norm is translation invariant. With
 * fewer than two vortices (d_min = ∞) the usual scale atol + rtol·max(|y_i|, |ŷ_i|) is used. (Measured, N = 200
 * random ± cloud, t = 100, rtol 1e-10: H drift 1.5e-10 with this scale vs 2.4e-9 with the usual one, for 1.6×
 * the steps.) Step-size control is the
 * "stabilized" PI controller of Hairer–Nørsett–Wanner §II.4 (Gustafsson): fac = err^{0.2−0.75β} / err_old^β,
 * β = 0.04, safety 0.9, step ratio limited to [0.2, 10], no increase right after a rejection. The starting
 * step follows the HNW §II.4 algorithm (with the max norm). Callers cap each step (e.g. Δt ≤ c·d_min²/κ) and
 * give a target time that is hit exactly, so frames land on t = k·Δt_sample deterministically.
 *
 * The right-hand side returns the minimum squared separation it saw; the value for the current state
 * (`minSeparation2`) is available for the step cap without extra work. No allocation per step.
 *
 * References: J.R. Dormand, P.J. Prince, J. Comput. Appl. Math. 6, 19 (1980), doi:10.1016/0771-050X(80)90013-3;
 * E. Hairer, S.P. Nørsett, G. Wanner, Solving Ordinary Differential Equations I, 2nd ed. (Springer 1993) §II.4–5,
 * doi:10.1007/978-3-540-78862-1; K. Gustafsson, ACM TOMS 17, 533 (1991), doi:10.1145/210232.210242.
 *
 * @example
 * ```ts
 * import { DormandPrince } from "./integrator.ts";
 * import { velocityUnbounded } from "./velocity.ts";
 * const g = Float64Array.of(1, 1);
 * const dp = new DormandPrince(2, (n, x, y, u, v) => velocityUnbounded(n, x, y, g, u, v), {
 *   relativeTolerance: 1e-10, absoluteTolerance: 1e-12, maxSteps: 1e6,
 * });
 * dp.x.set([-0.5, 0.5]);
 * dp.y.set([0, 0]);
 * dp.start(2, 0);
 * while (dp.t < 1) dp.step(1, 0.2 * dp.minSeparation2);
 * ```
 */
import { EngineFailure } from "../contract.ts";

/** Right-hand side: writes velocities (u, v) of n vortices at (x, y); returns the minimum squared separation. */
export type PlanarRhs = (
  n: number,
  x: Float64Array,
  y: Float64Array,
  u: Float64Array,
  v: Float64Array,
) => number;

export interface DormandPrinceOptions {
  /** Relative tolerance of the local error estimate (dimensionless). */
  readonly relativeTolerance: number;
  /** Absolute tolerance of the local error estimate (length units). */
  readonly absoluteTolerance: number;
  /** Maximum number of attempted steps (accepted + rejected) over the integrator's life. */
  readonly maxSteps: number;
}

// Dormand–Prince 5(4) tableau (HNW Table II.5.2).
// The equations are autonomous, so the nodes c_i = (1/5, 3/10, 4/5, 8/9, 1, 1) are not needed.
const A21 = 1 / 5;
const A31 = 3 / 40, A32 = 9 / 40;
const A41 = 44 / 45, A42 = -56 / 15, A43 = 32 / 9;
const A51 = 19372 / 6561, A52 = -25360 / 2187, A53 = 64448 / 6561, A54 = -212 / 729;
const A61 = 9017 / 3168, A62 = -355 / 33, A63 = 46732 / 5247, A64 = 49 / 176, A65 = -5103 / 18656;
const A71 = 35 / 384, A73 = 500 / 1113, A74 = 125 / 192, A75 = -2187 / 6784, A76 = 11 / 84;
// error coefficients: (5th-order weights) − (embedded 4th-order weights)
const E1 = 71 / 57600, E3 = -71 / 16695, E4 = 71 / 1920, E5 = -17253 / 339200, E6 = 22 / 525, E7 = -1 / 40;

const SAFETY = 0.9;
const FAC_MIN_INV = 0.1; // 1/10: at most ×10 growth
const FAC_MAX_INV = 5; // 1/0.2: at most ×0.2 shrink
const BETA = 0.04;
const EXPO = 0.2 - BETA * 0.75;
const UROUND = 2.220446049250313e-16;
const MAX_NONFINITE_RETRIES = 30;

/** DOPRI5 with PI step control over a resizable planar state; see the module comment. */
export class DormandPrince {
  /** Current positions (the array objects change after each accepted step; always read them afresh). */
  x: Float64Array;
  y: Float64Array;
  /** Number of active entries. */
  n = 0;
  /** Current time. */
  t = 0;
  /** Minimum squared separation reported by the right-hand side at the current state. */
  minSeparation2 = Infinity;
  /** Accepted and rejected step counts. */
  accepted = 0;
  rejected = 0;
  /** Right-hand-side evaluations. */
  evaluations = 0;
  /** Velocities at the current state (FSAL stage). */
  get u(): Float64Array {
    return this.#k1x;
  }
  get v(): Float64Array {
    return this.#k1y;
  }

  readonly #rhs: PlanarRhs;
  readonly #rtol: number;
  readonly #atol: number;
  readonly #maxSteps: number;
  #xn: Float64Array;
  #yn: Float64Array;
  readonly #xs: Float64Array;
  readonly #ys: Float64Array;
  #k1x: Float64Array;
  #k1y: Float64Array;
  readonly #k2x: Float64Array;
  readonly #k2y: Float64Array;
  readonly #k3x: Float64Array;
  readonly #k3y: Float64Array;
  readonly #k4x: Float64Array;
  readonly #k4y: Float64Array;
  readonly #k5x: Float64Array;
  readonly #k5y: Float64Array;
  readonly #k6x: Float64Array;
  readonly #k6y: Float64Array;
  #k7x: Float64Array;
  #k7y: Float64Array;
  #h = 0;
  #facOld = 1e-4;
  #rejectedLast = false;
  #pendingMin = Infinity;

  constructor(capacity: number, rhs: PlanarRhs, options: DormandPrinceOptions) {
    const c = Math.max(1, capacity);
    const a = () => new Float64Array(c);
    this.x = a();
    this.y = a();
    this.#xn = a();
    this.#yn = a();
    this.#xs = a();
    this.#ys = a();
    this.#k1x = a();
    this.#k1y = a();
    this.#k2x = a();
    this.#k2y = a();
    this.#k3x = a();
    this.#k3y = a();
    this.#k4x = a();
    this.#k4y = a();
    this.#k5x = a();
    this.#k5y = a();
    this.#k6x = a();
    this.#k6y = a();
    this.#k7x = a();
    this.#k7y = a();
    this.#rhs = rhs;
    this.#rtol = options.relativeTolerance;
    this.#atol = options.absoluteTolerance;
    this.#maxSteps = options.maxSteps;
  }

  /** Starts at time t0 from the first n entries of `x`, `y` (filled by the caller). */
  start(n: number, t0: number): void {
    this.n = n;
    this.t = t0;
    this.#h = 0;
    this.#facOld = 1e-4;
    this.#rejectedLast = false;
    this.resetFsal();
  }

  /**
   * Re-evaluates the first stage after the caller changed the state or `n` (e.g. removed vortices); the
   * proposed step size is kept. Throws `EngineFailure("nan")` if the velocities are not finite.
   */
  resetFsal(): void {
    this.minSeparation2 = this.#rhs(this.n, this.x, this.y, this.#k1x, this.#k1y);
    this.evaluations++;
    if (!allFinite(this.n, this.#k1x, this.#k1y)) {
      throw new EngineFailure(
        "nan",
        `non-finite velocity at t = ${this.t} (coincident vortices or non-finite positions)`,
        this.t,
      );
    }
  }

  /**
   * Takes one accepted step of at most `hMax`, never past `tTarget`; when the step reaches `tTarget`, `t` is set
   * to exactly `tTarget`. Throws `EngineFailure("step-underflow")` when the step size underflows or `maxSteps`
   * attempts are used up, and `EngineFailure("nan")` when non-finite values persist.
   */
  step(tTarget: number, hMax: number): void {
    const n = this.n;
    const remaining = tTarget - this.t;
    if (!(remaining > 0)) return;
    if (this.#h === 0) this.#h = this.#initialStep(Math.min(hMax, remaining));
    let nonFinite = 0;
    for (;;) {
      if (this.accepted + this.rejected >= this.#maxSteps) {
        throw new EngineFailure(
          "step-underflow",
          `maxSteps (${this.#maxSteps}) attempted steps used up at t = ${this.t}; raise integrator.maxSteps or ` +
            "check for very close pairs",
          this.t,
        );
      }
      let h = Math.min(this.#h, hMax);
      let lands = false;
      if (remaining <= h * (1 + 1e-9)) {
        h = remaining; // exceeds the cap by at most 1e-9 relative (round-off in k·Δt)
        lands = true;
      } else if (remaining < 1.001 * h) {
        h = 0.5 * remaining; // avoid leaving a sliver before the target
      }
      if (!lands && !(h > 16 * UROUND * Math.max(Math.abs(this.t), Math.abs(tTarget)))) {
        throw new EngineFailure(
          "step-underflow",
          `step size ${h} underflowed at t = ${this.t} (minimum separation ${
            Math.sqrt(this.minSeparation2)
          })`,
          this.t,
        );
      }
      const err = this.#attempt(n, h);
      if (err <= 1) {
        const fac11 = Math.pow(err, EXPO);
        let fac = fac11 / Math.pow(this.#facOld, BETA);
        fac = Math.max(FAC_MIN_INV, Math.min(FAC_MAX_INV, fac / SAFETY));
        let hNew = h / fac;
        if (this.#rejectedLast) hNew = Math.min(hNew, h);
        if (h < this.#h) hNew = Math.max(hNew, this.#h); // a capped step says nothing against the proposal
        this.#facOld = Math.max(err, 1e-4);
        this.#rejectedLast = false;
        this.#h = hNew;
        this.#accept(lands ? tTarget : this.t + h);
        return;
      }
      this.rejected++;
      if (Number.isFinite(err)) {
        const fac11 = Math.pow(err, EXPO);
        this.#h = h / Math.min(FAC_MAX_INV, fac11 / SAFETY);
      } else {
        if (++nonFinite > MAX_NONFINITE_RETRIES) {
          throw new EngineFailure(
            "nan",
            `non-finite values in every trial step near t = ${this.t} (step size down to ${h})`,
            this.t,
          );
        }
        this.#h = h / FAC_MAX_INV;
      }
      this.#rejectedLast = true;
    }
  }

  #accept(tNew: number): void {
    this.t = tNew;
    let s: Float64Array = this.x;
    this.x = this.#xn;
    this.#xn = s;
    s = this.y;
    this.y = this.#yn;
    this.#yn = s;
    s = this.#k1x;
    this.#k1x = this.#k7x;
    this.#k7x = s;
    s = this.#k1y;
    this.#k1y = this.#k7y;
    this.#k7y = s;
    this.minSeparation2 = this.#pendingMin;
    this.accepted++;
  }

  /** One trial step of size h from (x, y); leaves ŷ in (#xn, #yn) and f(ŷ) in k7; returns the error norm. */
  #attempt(n: number, h: number): number {
    const x = this.x, y = this.y, xs = this.#xs, ys = this.#ys, rhs = this.#rhs;
    const k1x = this.#k1x,
      k1y = this.#k1y,
      k2x = this.#k2x,
      k2y = this.#k2y,
      k3x = this.#k3x,
      k3y = this.#k3y;
    const k4x = this.#k4x,
      k4y = this.#k4y,
      k5x = this.#k5x,
      k5y = this.#k5y,
      k6x = this.#k6x,
      k6y = this.#k6y;
    const k7x = this.#k7x, k7y = this.#k7y, xn = this.#xn, yn = this.#yn;
    for (let i = 0; i < n; i++) {
      xs[i] = x[i] + h * A21 * k1x[i];
      ys[i] = y[i] + h * A21 * k1y[i];
    }
    rhs(n, xs, ys, k2x, k2y);
    for (let i = 0; i < n; i++) {
      xs[i] = x[i] + h * (A31 * k1x[i] + A32 * k2x[i]);
      ys[i] = y[i] + h * (A31 * k1y[i] + A32 * k2y[i]);
    }
    rhs(n, xs, ys, k3x, k3y);
    for (let i = 0; i < n; i++) {
      xs[i] = x[i] + h * (A41 * k1x[i] + A42 * k2x[i] + A43 * k3x[i]);
      ys[i] = y[i] + h * (A41 * k1y[i] + A42 * k2y[i] + A43 * k3y[i]);
    }
    rhs(n, xs, ys, k4x, k4y);
    for (let i = 0; i < n; i++) {
      xs[i] = x[i] + h * (A51 * k1x[i] + A52 * k2x[i] + A53 * k3x[i] + A54 * k4x[i]);
      ys[i] = y[i] + h * (A51 * k1y[i] + A52 * k2y[i] + A53 * k3y[i] + A54 * k4y[i]);
    }
    rhs(n, xs, ys, k5x, k5y);
    for (let i = 0; i < n; i++) {
      xs[i] = x[i] + h * (A61 * k1x[i] + A62 * k2x[i] + A63 * k3x[i] + A64 * k4x[i] + A65 * k5x[i]);
      ys[i] = y[i] + h * (A61 * k1y[i] + A62 * k2y[i] + A63 * k3y[i] + A64 * k4y[i] + A65 * k5y[i]);
    }
    rhs(n, xs, ys, k6x, k6y);
    for (let i = 0; i < n; i++) {
      xn[i] = x[i] + h * (A71 * k1x[i] + A73 * k3x[i] + A74 * k4x[i] + A75 * k5x[i] + A76 * k6x[i]);
      yn[i] = y[i] + h * (A71 * k1y[i] + A73 * k3y[i] + A74 * k4y[i] + A75 * k5y[i] + A76 * k6y[i]);
    }
    const minR2 = rhs(n, xn, yn, k7x, k7y);
    this.evaluations += 6;
    const rtol = this.#rtol, atol = this.#atol;
    const fixed = this.#separationScale(); // > 0: atol + rtol·d_min; 0: per-component scale
    let err = 0;
    let finite = 0; // accumulates 0·value: stays 0 unless some value is NaN/±Inf
    for (let i = 0; i < n; i++) {
      const ex = h * (E1 * k1x[i] + E3 * k3x[i] + E4 * k4x[i] + E5 * k5x[i] + E6 * k6x[i] + E7 * k7x[i]);
      const ey = h * (E1 * k1y[i] + E3 * k3y[i] + E4 * k4y[i] + E5 * k5y[i] + E6 * k6y[i] + E7 * k7y[i]);
      const sx = fixed > 0 ? fixed : atol + rtol * Math.max(Math.abs(x[i]), Math.abs(xn[i]));
      const sy = fixed > 0 ? fixed : atol + rtol * Math.max(Math.abs(y[i]), Math.abs(yn[i]));
      const qx = Math.abs(ex) / sx, qy = Math.abs(ey) / sy;
      if (qx > err) err = qx;
      if (qy > err) err = qy;
      finite += 0 * (ex + ey + xn[i] + yn[i]);
    }
    if (finite !== 0) return NaN; // NaN !== 0 as well
    this.#pendingMin = minR2;
    return err;
  }

  /** Proposed size of the next step (0 before the first step: then the HNW starting step is used). */
  get proposedStep(): number {
    return this.#h;
  }
  /** Overrides the next proposed step (e.g. to restart with a known step size). */
  set proposedStep(h: number) {
    this.#h = h > 0 && Number.isFinite(h) ? h : 0;
  }

  /** atol + rtol·d_min when d_min is finite, else 0 (use the per-component scale). */
  #separationScale(): number {
    const d2 = this.minSeparation2;
    return Number.isFinite(d2) ? this.#atol + this.#rtol * Math.sqrt(d2) : 0;
  }

  /** HNW §II.4 starting step (max norm, same error scale as the steps), using k2 as scratch. */
  #initialStep(hMax: number): number {
    const n = this.n, x = this.x, y = this.y, k1x = this.#k1x, k1y = this.#k1y;
    const rtol = this.#rtol, atol = this.#atol;
    const fixed = this.#separationScale();
    let dnf = 0, dny = 0;
    for (let i = 0; i < n; i++) {
      const sx = fixed > 0 ? fixed : atol + rtol * Math.abs(x[i]);
      const sy = fixed > 0 ? fixed : atol + rtol * Math.abs(y[i]);
      dnf = Math.max(dnf, Math.abs(k1x[i]) / sx, Math.abs(k1y[i]) / sy);
      dny = Math.max(dny, Math.abs(x[i]) / sx, Math.abs(y[i]) / sy);
    }
    let h = dnf <= 1e-10 || dny <= 1e-10 ? 1e-6 : 0.01 * dny / dnf;
    h = Math.min(h, hMax);
    const xs = this.#xs, ys = this.#ys, k2x = this.#k2x, k2y = this.#k2y;
    for (let i = 0; i < n; i++) {
      xs[i] = x[i] + h * k1x[i];
      ys[i] = y[i] + h * k1y[i];
    }
    this.#rhs(n, xs, ys, k2x, k2y);
    this.evaluations++;
    let der2 = 0;
    for (let i = 0; i < n; i++) {
      const sx = fixed > 0 ? fixed : atol + rtol * Math.abs(x[i]);
      const sy = fixed > 0 ? fixed : atol + rtol * Math.abs(y[i]);
      der2 = Math.max(der2, Math.abs(k2x[i] - k1x[i]) / sx, Math.abs(k2y[i] - k1y[i]) / sy);
    }
    der2 /= h;
    const der12 = Math.max(der2, dnf);
    const h1 = der12 <= 1e-15 ? Math.max(1e-6, h * 1e-3) : Math.pow(0.01 / der12, 0.2);
    const h0 = Math.min(100 * h, h1, hMax);
    return Number.isFinite(h0) && h0 > 0 ? h0 : hMax;
  }
}

function allFinite(n: number, u: Float64Array, v: Float64Array): boolean {
  let acc = 0;
  for (let i = 0; i < n; i++) acc += 0 * (u[i] + v[i]);
  return acc === 0;
}
