/**
 * Initial filament shapes, one function per `initial.kind` of the study file: `ring` (`ringPoints`), `ring-pair`
 * (two tilted rings whose rims meet first, `collidingRingsPoints`), `helix` (a periodic line carrying a helical
 * Kelvin wave, `kelvinWavePoints`) and `ring-ball` (random rings with centres in a ball, `ringCloud`).
 *
 * Method (ring ball). Radii fixed or normal N(μ, σ) truncated below at R_min = max(3δ, μ − 3σ) by resampling
 * (the rejected fraction is recorded; the mean of the truncated law, μ + σφ(a)/(1 − Φ(a)) with
 * a = (R_min − μ)/σ, converts a target line density into a ring count). Centres uniform in a ball of radius R_c
 * (r = R_c u^{1/3}, direction uniform on S²), ring normals uniform on S² (normalised triple of normals), random
 * phase φ₀. A ring of radius R has M = ⌈2πR/h⌉ points (h the requested spacing; the engine uses the middle of
 * the remeshing band, h = (δ_min + δ)/2, so points neither split nor merge at once) s_k = c + R(cos φ_k e₁ + sin φ_k e₂), φ_k = φ₀ + 2πk/M,
 * with (e₁, e₂, n̂) right-handed, so it moves along +n̂. Draw order is fixed (radius, centre, normal, phase
 * per ring), so a seed gives one configuration.
 *
 * References: M.E. Muller, Comm. ACM 2(4), 19 (1959), doi:10.1145/377939.377946 (uniform directions);
 * T. Duff et al., J. Comput. Graph. Tech. 6(1), 1 (2017) (branch-free orthonormal basis); M. Abramowitz,
 * I.A. Stegun, Handbook of Mathematical Functions (1964), eq. 7.1.26 (erfc, |error| ≤ 1.5e-7); N.L. Johnson,
 * S. Kotz, N. Balakrishnan, Continuous Univariate Distributions, Vol. 1, 2nd ed. (Wiley, 1994), §10.1
 * (truncated normal mean).
 *
 * @example
 * ```ts
 * import { ringPoints } from "./initial.ts";
 * const loop = ringPoints(1, [0, 0, 0], [0, 0, 1], 0.1, 0); // 63 points, moves along +z
 * ```
 */
import type { RandomStream } from "../random.ts";

export type Vec3 = readonly [number, number, number];
export type Loop = Array<[number, number, number]>;

/** Orthonormal e₁, e₂ with e₁×e₂ = n̂ (Duff et al. 2017). `n` must be a unit vector. */
export function orthonormalBasis(n: Vec3): [Vec3, Vec3] {
  const sign = n[2] >= 0 ? 1 : -1;
  const a = -1 / (sign + n[2]);
  const b = n[0] * n[1] * a;
  return [
    [1 + sign * n[0] * n[0] * a, sign * b, -sign * n[0]],
    [b, sign + n[1] * n[1] * a, -n[1]],
  ];
}

function unit(v: Vec3): Vec3 {
  const m = Math.hypot(v[0], v[1], v[2]);
  if (!(m > 0)) throw new RangeError("a ring normal must be a non-zero vector");
  return [v[0] / m, v[1] / m, v[2] / m];
}

/** Points of a ring of radius R about `centre` with normal `normal` (direction of motion), spacing ≤ δ. */
export function ringPoints(R: number, centre: Vec3, normal: Vec3, spacing: number, phase: number): Loop {
  const n = unit(normal);
  const [e1, e2] = orthonormalBasis(n);
  const m = Math.max(3, Math.ceil(2 * Math.PI * R / spacing));
  const out: Loop = [];
  for (let k = 0; k < m; k++) {
    const p = phase + 2 * Math.PI * k / m;
    const c = Math.cos(p), s = Math.sin(p);
    out.push([
      centre[0] + R * (c * e1[0] + s * e2[0]),
      centre[1] + R * (c * e1[1] + s * e2[1]),
      centre[2] + R * (c * e1[2] + s * e2[2]),
    ]);
  }
  return out;
}

/**
 * Two rings of radius R approaching each other along x: centres (∓d/2, ∓b/2, 0) (d = separation, b = offset
 * along y), normals (±cos ψ, 0, −sin ψ) with ψ = angle: their planes lean towards each other so the top rims
 * (antiparallel there) meet first. ψ = 0 gives a head-on coaxial pair when b = 0.
 */
export function collidingRingsPoints(
  R: number,
  separation: number,
  offset: number,
  angle: number,
  spacing: number,
): Loop[] {
  const c = Math.cos(angle), s = Math.sin(angle);
  return [
    ringPoints(R, [-separation / 2, -offset / 2, 0], [c, 0, -s], spacing, 0),
    ringPoints(R, [separation / 2, offset / 2, 0], [-c, 0, -s], spacing, 0),
  ];
}

/**
 * A line along +z through a periodic box of side L carrying a helical Kelvin wave: x = A cos(kz),
 * y = A sin(kz), k = 2π·waves/L, with N = ⌈L/δ⌉ points (z from −L/2). The line closes through the box.
 */
export function kelvinWavePoints(L: number, waves: number, amplitude: number, spacing: number): Loop {
  const m = Math.ceil(L / spacing);
  const k = 2 * Math.PI * waves / L;
  const out: Loop = [];
  for (let q = 0; q < m; q++) {
    const zq = -L / 2 + L * q / m;
    out.push([amplitude * Math.cos(k * zq), amplitude * Math.sin(k * zq), zq]);
  }
  return out;
}

/** Standard normal cumulative distribution Φ(x) via A&S 7.1.26 (|error| ≤ 1.5e-7·½). */
export function normalCdf(x: number): number {
  const t0 = Math.abs(x) / Math.SQRT2;
  const t = 1 / (1 + 0.3275911 * t0);
  const poly = t *
    (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027 + t * 1.061405429))));
  const erfc = poly * Math.exp(-t0 * t0);
  return x >= 0 ? 1 - 0.5 * erfc : 0.5 * erfc;
}

/** Mean of N(μ, σ) truncated below at rmin. */
export function truncatedNormalMean(mu: number, sd: number, rmin: number): number {
  if (sd === 0) return mu;
  const a = (rmin - mu) / sd;
  const phi = Math.exp(-0.5 * a * a) / Math.sqrt(2 * Math.PI);
  return mu + sd * phi / (1 - normalCdf(a));
}

/** Settings of a random ring cloud (lengths in the engine unit). */
export interface RingCloudSpec {
  readonly count?: number;
  readonly targetLineDensity?: number;
  readonly radius: number | { readonly mean: number; readonly sd: number };
  readonly cloudRadius: number;
  readonly centre: Vec3;
}

/** A generated ring cloud. */
export interface RingCloud {
  readonly loops: Loop[];
  readonly count: number;
  /** Fraction of radius draws rejected by the truncation (0 for a fixed radius). */
  readonly rejectedFraction: number;
  /** Nominal density Σ2πR_k / ((4/3)πR_c³) of the drawn radii. */
  readonly nominalLineDensity: number;
}

/**
 * Draws a ring cloud (see module doc): points `spacing` apart at most, radii truncated at
 * max(3·resolution, μ − 3σ).
 */
export function ringCloud(
  spec: RingCloudSpec,
  spacing: number,
  resolution: number,
  rng: RandomStream,
): RingCloud {
  const volume = 4 / 3 * Math.PI * spec.cloudRadius ** 3;
  const fixed = typeof spec.radius === "number";
  const mu = typeof spec.radius === "number" ? spec.radius : spec.radius.mean;
  const sd = typeof spec.radius === "number" ? 0 : spec.radius.sd;
  const rmin = Math.max(3 * resolution, mu - 3 * sd);
  let count: number;
  if (spec.count !== undefined) count = spec.count;
  else {
    const meanR = fixed ? mu : truncatedNormalMean(mu, sd, rmin);
    count = Math.max(1, Math.round(spec.targetLineDensity! * volume / (2 * Math.PI * meanR)));
  }
  const loops: Loop[] = [];
  let draws = 0, rejected = 0, total = 0;
  for (let k = 0; k < count; k++) {
    let R = mu;
    if (!fixed) {
      for (;;) {
        draws++;
        R = mu + sd * rng.normal();
        if (R >= rmin) break;
        rejected++;
        if (draws > 1000 * (count + 10)) {
          throw new RangeError(
            `ring radius truncation at ${rmin} rejects almost every draw of N(${mu}, ${sd})`,
          );
        }
      }
    }
    const r = spec.cloudRadius * Math.cbrt(rng.uniform());
    const d = unit3(rng);
    const nrm = unit3(rng);
    const phase = 2 * Math.PI * rng.uniform();
    const c: Vec3 = [spec.centre[0] + r * d[0], spec.centre[1] + r * d[1], spec.centre[2] + r * d[2]];
    loops.push(ringPoints(R, c, nrm, spacing, phase));
    total += 2 * Math.PI * R;
  }
  return {
    loops,
    count,
    rejectedFraction: draws > 0 ? rejected / draws : 0,
    nominalLineDensity: total / volume,
  };
}

function unit3(rng: RandomStream): Vec3 {
  for (;;) {
    const a = rng.normal(), b = rng.normal(), c = rng.normal();
    const m = Math.hypot(a, b, c);
    if (m > 1e-12) return [a / m, b / m, c / m];
  }
}
