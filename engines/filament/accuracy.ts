/**
 * Run-time accuracy check of the fast nonlocal sum (tree or FMM): every `every` steps, the nonlocal velocity
 * the method produced at `samples` points (evenly spaced over the state) is compared with the exact
 * straight-segment sum over all segments (minimum image + 26 neighbours in a periodic box, as the methods
 * approximate). Errors are |Δv|/v_rms, v_rms the RMS nonlocal velocity of all points at that evaluation —
 * the acceptance measure of docs/methods.md §2.9 (99th percentile ≤ 1e-3). The engine reports the 99th percentile of
 * the errors sampled since the previous frame as a frame diagnostic and over the whole run as scalars, and
 * emits an `accuracy-warning` event for each frame interval whose 99th percentile exceeds the tolerance.
 *
 * Cost: samples × N segment evaluations per check (e.g. 32 × 2·10⁴ ≈ 4 ms every 20 steps).
 *
 * References: docs/methods.md §2.9 protocol (common practice, no source for sampling during runs).
 *
 * @example
 * ```ts
 * import { AccuracyMonitor } from "./accuracy.ts";
 * const m = new AccuracyMonitor({ every: 20, samples: 32, tolerance: 1e-3 });
 * // m.due(step) → field.armCheck(m); … m.takeFrameP99();
 * ```
 */
import { segmentVelocity } from "./biot_savart.ts";

/** Settings of the run-time check (every = 0 disables it). */
export interface AccuracyCheckSettings {
  readonly every: number;
  readonly samples: number;
  readonly tolerance: number;
}

export const ACCURACY_CHECK_DEFAULTS: AccuracyCheckSettings = { every: 20, samples: 32, tolerance: 1e-3 };

function p99(values: number[]): number {
  if (values.length === 0) return NaN;
  const s = Float64Array.from(values).sort();
  return s[Math.min(s.length - 1, Math.floor(0.99 * s.length))];
}

/** Collects sampled errors of the nonlocal sum (see module doc). */
export class AccuracyMonitor {
  readonly settings: AccuracyCheckSettings;
  private sinceFrame: number[] = [];
  private readonly all: number[] = [];
  private maxError = 0;
  private readonly out = new Float64Array(3);
  checks = 0;

  constructor(settings: AccuracyCheckSettings) {
    this.settings = settings;
  }

  /** True when step number `step` (0-based) should be checked. */
  due(step: number): boolean {
    return this.settings.every > 0 && this.settings.samples > 0 && step % this.settings.every === 0;
  }

  /**
   * Compares the nonlocal velocity (after − before, per point, without the factor cf = κ/4π applied twice:
   * the arrays hold cf-scaled velocities) with the exact sum at the sampled points. Segment j runs from point
   * j along (dx, dy, dz)_j; own segments (i and prev[i]) are skipped; L > 0: periodic cube.
   */
  check(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array,
    prev: Int32Array,
    dx: Float64Array,
    dy: Float64Array,
    dz: Float64Array,
    L: number,
    cf: number,
    before: readonly [Float64Array, Float64Array, Float64Array],
    after: readonly [Float64Array, Float64Array, Float64Array],
  ): void {
    if (n < 2) return;
    let ms = 0;
    for (let i = 0; i < n; i++) {
      const ux = after[0][i] - before[0][i], uy = after[1][i] - before[1][i], uz = after[2][i] - before[2][i];
      ms += ux * ux + uy * uy + uz * uz;
    }
    const rms = Math.sqrt(ms / n);
    if (!(rms > 0)) return;
    const m = Math.min(this.settings.samples, n);
    const o = this.out;
    for (let k = 0; k < m; k++) {
      const i = Math.floor((k + 0.5) * n / m);
      let ex = 0, ey = 0, ez = 0;
      for (let j = 0; j < n; j++) {
        const own = j === i || j === prev[i];
        if (L > 0) {
          let ax = x[j] - x[i], ay = y[j] - y[i], az = z[j] - z[i];
          ax -= L * Math.round((ax + 0.5 * dx[j]) / L);
          ay -= L * Math.round((ay + 0.5 * dy[j]) / L);
          az -= L * Math.round((az + 0.5 * dz[j]) / L);
          for (let a = -1; a <= 1; a++) {
            for (let b = -1; b <= 1; b++) {
              for (let c = -1; c <= 1; c++) {
                if (own && a === 0 && b === 0 && c === 0) continue;
                segmentVelocity(0, 0, 0, ax + a * L, ay + b * L, az + c * L, dx[j], dy[j], dz[j], o);
                ex += o[0];
                ey += o[1];
                ez += o[2];
              }
            }
          }
        } else {
          if (own) continue;
          segmentVelocity(x[i], y[i], z[i], x[j], y[j], z[j], dx[j], dy[j], dz[j], o);
          ex += o[0];
          ey += o[1];
          ez += o[2];
        }
      }
      const err = Math.hypot(
        after[0][i] - before[0][i] - cf * ex,
        after[1][i] - before[1][i] - cf * ey,
        after[2][i] - before[2][i] - cf * ez,
      ) / rms;
      this.sinceFrame.push(err);
      this.all.push(err);
      if (err > this.maxError) this.maxError = err;
    }
    this.checks++;
  }

  /** 99th percentile of the errors sampled since the last call (NaN if none), then resets. */
  takeFrameP99(): number {
    const v = p99(this.sinceFrame);
    this.sinceFrame = [];
    return v;
  }

  /** Whole-run summary: 99th percentile, maximum and number of sampled errors. */
  summary(): { p99: number; max: number; samples: number } {
    return { p99: p99(this.all), max: this.maxError, samples: this.all.length };
  }
}
