/**
 * Point vortices in a doubly periodic square box of side L: velocity kernel and Green's function.
 *
 * Method: the Weiss–McWilliams image series. With the pair separation wrapped to [−L/2, L/2]² and scaled to a
 * 2π box (a = 2πΔx/L, b = 2πΔy/L), a vortex Γ and all its images induce
 *
 *   u = −(Γ/2L) Σ_m sin b / [cosh(a − 2πm) − cos b],   v = +(Γ/2L) Σ_m sin a / [cosh(b − 2πm) − cos a],
 *
 * summed over image columns (u) and rows (v). This is the zero-mean periodic solution: it carries a uniform
 * neutralising background −Γ/L² per vortex. The velocity kernel sums m = 0, ±1 exactly (the m = 0 denominator
 * written as 2 sinh²(a/2) + 2 sin²(b/2) to avoid cancellation for close pairs) and the tail |m| ≥ 2 in closed
 * form (see `velocityPeriodic`), so it equals the full series to ~1e-15 relative; the field is odd in (a, b),
 * so each pair is evaluated once and applied antisymmetrically. The Green's function sums |m| ≤ 5 (terms fall
 * like e^{−2π|m|}; truncation ≈ e^{−11π} ≈ 1e-15).
 *
 * Green's function (2π box): G(a, b) = (1/4π)[Σ_m ln((cosh(a − 2πm) − cos b)/cosh(2πm)) − a²/(2π)], with
 * ∇²G = δ − 1/(4π²); for side L, G_L(Δ) = G(2πΔ/L). H = −Σ_{i<j} Γ_iΓ_j G_L(r_i − r_j).
 *
 * References: J.B. Weiss, J.C. McWilliams, Phys. Fluids A 3, 835 (1991), doi:10.1063/1.858014;
 * M.A. Stremler, H. Aref, J. Fluid Mech. 392, 101 (1999), doi:10.1017/S0022112099005536;
 * M. Abramowitz, I.A. Stegun, Handbook of Mathematical Functions (1964) §22.9 (generating function of U_k).
 *
 * @example
 * ```ts
 * import { velocityPeriodic } from "./periodic.ts";
 * const x = Float64Array.of(0, 1), y = Float64Array.of(0, 0.5), g = Float64Array.of(1, 0);
 * const u = new Float64Array(2), v = new Float64Array(2);
 * velocityPeriodic(2, x, y, g, 2 * Math.PI, u, v); // u[1] ≈ −0.0577718066553, v[1] ≈ 0.1145789633536
 * ```
 */

/** Image columns/rows summed on each side of the central one in the Green's function. */
export const IMAGE_ORDER = 5;

const TWO_PI = 2 * Math.PI;
// e^{2πm} for m = 1..5 and ln cosh(2πm) for m = 1..5 (index m − 1).
const EP = Float64Array.from({ length: IMAGE_ORDER }, (_, k) => Math.exp(TWO_PI * (k + 1)));
const EM = Float64Array.from({ length: IMAGE_ORDER }, (_, k) => Math.exp(-TWO_PI * (k + 1)));
const LNCOSH = Float64Array.from({ length: IMAGE_ORDER }, (_, k) => Math.log(Math.cosh(TWO_PI * (k + 1))));

// Taylor coefficients 1/(2k+1)! and 1/(2k)!, k = 0..11: with s = ∓x², x·ODD(s) = sin x / sinh x and
// EVEN(s) = cos x / cosh x. For |x| ≤ π/2 the truncation is below 2e-18.
const O0 = 1, O1 = 1 / 6, O2 = 1 / 120, O3 = 1 / 5040, O4 = 1 / 362880, O5 = 1 / 39916800;
const O6 = 1 / 6227020800, O7 = 1 / 1307674368000, O8 = 1 / 355687428096000, O9 = 1 / 121645100408832000;
const O10 = 1 / 51090942171709440000, O11 = 1 / 25852016738884976640000;
const E0 = 1, E1 = 1 / 2, E2 = 1 / 24, E3 = 1 / 720, E4 = 1 / 40320, E5 = 1 / 3628800, E6 = 1 / 479001600;
const E7 = 1 / 87178291200, E8 = 1 / 20922789888000, E9 = 1 / 6402373705728000;
const E10 = 1 / 2432902008176640000, E11 = 1 / 1124000727777607680000;

/** Σ_k s^k/(2k+1)!, k ≤ 11 (Horner). */
function oddSeries(s: number): number {
  return O0 + s * (O1 + s * (O2 + s * (O3 + s * (O4 + s * (O5 + s * (O6 + s * (O7 + s * (O8 + s * (O9 +
                                        s * (O10 + s * O11))))))))));
}

/** Σ_k s^k/(2k)!, k ≤ 11 (Horner). */
function evenSeries(s: number): number {
  return E0 + s * (E1 + s * (E2 + s * (E3 + s * (E4 + s * (E5 + s * (E6 + s * (E7 + s * (E8 + s * (E9 +
                                        s * (E10 + s * E11))))))))));
}

// Tail of the image sum, |m| ≥ 2: G_j = Σ_{m≥2} e^{−2πmj} = e^{−4πj}/(1 − e^{−2πj}), j = 1..4.
const G1 = Math.exp(-4 * Math.PI) / -Math.expm1(-2 * Math.PI);
const G2 = Math.exp(-8 * Math.PI) / -Math.expm1(-4 * Math.PI);
const G3 = Math.exp(-12 * Math.PI) / -Math.expm1(-6 * Math.PI);
const G4 = Math.exp(-16 * Math.PI) / -Math.expm1(-8 * Math.PI);
const EP1 = Math.exp(TWO_PI), EM1 = Math.exp(-TWO_PI);

/**
 * Reference kernel (the image series of the module doc, evaluated term by term): velocities (u, v) of n
 * vortices in the periodic box [−side/2, side/2)²; returns the minimum squared minimum-image pair distance.
 * Same results as `velocityPeriodic` to ~1e-15, about 5× slower; kept for tests and benchmarks.
 *
 * Evaluation: the half-angles a/2, b/2 lie in [−π/2, π/2] after wrapping, so sin, cos, sinh and cosh come from
 * degree-23 Taylor polynomials (truncation < 2e-18). Columns m = 0, ±1 are summed exactly. For |m| ≥ 2,
 * q = e^{−|a − 2πm|} ≤ e^{−3π}, and 1/(cosh z − c) = 2q/(1 − 2cq + q²) = 2 Σ_k U_k(c) q^{k+1} (Chebyshev
 * polynomials of the second kind), so the whole tail is Σ_k 2U_k(c)(e^{(k+1)a} + e^{−(k+1)a}) G_{k+1} with
 * geometric-series constants G_j; keeping k ≤ 3 leaves < 1e-19. The result is the full (infinite) image sum.
 */
export function velocityPeriodicImageSeries(
  n: number,
  x: Float64Array,
  y: Float64Array,
  g: Float64Array,
  side: number,
  u: Float64Array,
  v: Float64Array,
): number {
  u.fill(0, 0, n);
  v.fill(0, 0, n);
  const half = 0.5 * side;
  const invSide = 1 / side;
  const hs = Math.PI / side; // half of 2π/L
  let minR2 = Infinity;
  for (let i = 0; i < n; i++) {
    const xi = x[i], yi = y[i], gi = g[i];
    let su = 0, sv = 0;
    for (let j = i + 1; j < n; j++) {
      let dx = xi - x[j];
      let dy = yi - y[j];
      if (dx > half || dx < -half) dx -= side * Math.round(dx * invSide);
      if (dy > half || dy < -half) dy -= side * Math.round(dy * invSide);
      const r2 = dx * dx + dy * dy;
      if (r2 < minR2) minR2 = r2;
      const ha = hs * dx, hb = hs * dy;
      const ta = ha * ha, tb = hb * hb;
      const sa = ha * oddSeries(-ta), ca = evenSeries(-ta); // sin, cos of a/2
      const sb = hb * oddSeries(-tb), cb = evenSeries(-tb);
      const sha = ha * oddSeries(ta), cha = evenSeries(ta); // sinh, cosh of a/2
      const shb = hb * oddSeries(tb), chb = evenSeries(tb);
      const sinA = 2 * sa * ca, cosA = 1 - 2 * sa * sa;
      const sinB = 2 * sb * cb, cosB = 1 - 2 * sb * sb;
      const ea = (cha + sha) * (cha + sha), iea = (cha - sha) * (cha - sha); // e^{±a}
      const eb = (chb + shb) * (chb + shb), ieb = (chb - shb) * (chb - shb);
      // u: sin b Σ_m 1/(cosh(a − 2πm) − cos b)
      const d0 = 2 * (sha * sha + sb * sb); // cosh a − cos b without cancellation
      const dp = 0.5 * (ea * EM1 + iea * EP1) - cosB; // m = +1
      const dm = 0.5 * (ea * EP1 + iea * EM1) - cosB; // m = −1
      const pa = ea + iea, ea2 = ea * ea, iea2 = iea * iea;
      const tailU = 2 *
        (pa * G1 + 2 * cosB * (ea2 + iea2) * G2 + (4 * cosB * cosB - 1) * (ea2 * ea + iea2 * iea) * G3 +
          (8 * cosB * cosB - 4) * cosB * (ea2 * ea2 + iea2 * iea2) * G4);
      const fu = sinB * ((dp * dm + d0 * (dp + dm)) / (d0 * dp * dm) + tailU);
      // v: sin a Σ_m 1/(cosh(b − 2πm) − cos a)
      const e0 = 2 * (shb * shb + sa * sa);
      const ep = 0.5 * (eb * EM1 + ieb * EP1) - cosA;
      const em = 0.5 * (eb * EP1 + ieb * EM1) - cosA;
      const pb = eb + ieb, eb2 = eb * eb, ieb2 = ieb * ieb;
      const tailV = 2 *
        (pb * G1 + 2 * cosA * (eb2 + ieb2) * G2 + (4 * cosA * cosA - 1) * (eb2 * eb + ieb2 * ieb) * G3 +
          (8 * cosA * cosA - 4) * cosA * (eb2 * eb2 + ieb2 * ieb2) * G4);
      const fv = sinA * ((ep * em + e0 * (ep + em)) / (e0 * ep * em) + tailV);
      // velocity of i from j: u = −Γ_j fu/(2L), v = +Γ_j fv/(2L); of j from i: opposite sign (odd field)
      const gj = g[j];
      su -= gj * fu;
      sv += gj * fv;
      u[j] += gi * fu;
      v[j] -= gi * fv;
    }
    u[i] += su;
    v[i] += sv;
  }
  const pref = 0.5 * invSide;
  for (let i = 0; i < n; i++) {
    u[i] *= pref;
    v[i] *= pref;
  }
  return minR2;
}

/**
 * Periodic Green's function G_L(dx, dy) for a box of side L (the additive constant fixed by the cosh(2πm)
 * normalisation above); used for the Hamiltonian. Not a hot path.
 */
export function periodicGreen(dx: number, dy: number, side: number): number {
  dx -= side * Math.round(dx / side);
  dy -= side * Math.round(dy / side);
  const s = TWO_PI / side;
  const a = s * dx, b = s * dy;
  const sha = Math.sinh(0.5 * a);
  const sb = Math.sin(0.5 * b);
  const cosB = 1 - 2 * sb * sb;
  const ea = Math.exp(a), iea = Math.exp(-a);
  let sum = Math.log(2 * (sha * sha + sb * sb));
  for (let k = 0; k < IMAGE_ORDER; k++) {
    const ep = EP[k], em = EM[k];
    sum += Math.log(0.5 * (ea * em + iea * ep) - cosB) - LNCOSH[k];
    sum += Math.log(0.5 * (ea * ep + iea * em) - cosB) - LNCOSH[k];
  }
  return (sum - a * a / TWO_PI) / (4 * Math.PI);
}

// ---- Fast kernel: the Weierstrass ζ function of the square lattice -------------------------------------------
//
// With ẑ = (z_i − z_j)/L wrapped to the unit cell (|Re ẑ|, |Im ẑ| ≤ ½), the doubly periodic conjugate velocity
// with a neutralising background is u − iv = (Γ/2πiL)[ζ(ẑ) − π ẑ̄], ζ the Weierstrass zeta function of the
// lattice Z + iZ (quasi-periods η = π/2, Legendre's relation; the −π ẑ̄ term makes it periodic and is the
// uniform background vorticity −Γ/L²). Near images are summed in closed form: each 4-set of lattice points ω
// with ω⁴ = c contributes Σ[1/(ẑ − ω) + 1/ω + ẑ/ω²] = 4ẑ³/(ẑ⁴ − c); with the sets c = 1 (±1, ±i) and
// c = −4 (±1 ± i),
//   ζ(ẑ) = (9w² + 15w − 4)/(ẑ(w² + 3w − 4)) − ẑ³ Σ_{j≥1} G″_{4j} w^{j−1},   w = ẑ⁴,
// where G″_{4j} = G_{4j} − 4 − 4(−1/4)^j are the lattice sums Σ ω^{−4j} over the remaining points (|ω| ≥ 2),
// from the Eisenstein series of τ = i: G_{4j} = 2ζ_R(4j) + (2π)^{4j}·8j/(4j)!·Σ_n σ_{4j−1}(n) e^{−2πn}.
// On the unit cell the remaining terms fall like (|ẑ|/2)^{4j} ≤ 64^{−j}: FAST_TERMS = 8 leave < 4e-16 of |ζ|
// (at the cell's corners; much less elsewhere).
// One complex division and a degree-7 polynomial per pair, against four transcendental series above.
//
// References: M. Abramowitz, I.A. Stegun, Handbook of Mathematical Functions (1964) §18 (Weierstrass ζ,
// Legendre's relation, lemniscatic case); T.M. Apostol, Modular Functions and Dirichlet Series in Number
// Theory, 2nd ed. (Springer, 1990) §1.9 (Fourier series of the Eisenstein series G_{2k}); L. Tkachenko,
// Sov. Phys. JETP 22, 1282 (1966) (vortex lattices and the Weierstrass functions), the identity checked here
// against the image series of Weiss & McWilliams to 1e-15.

/** Polynomial terms of the fast kernel. */
const FAST_TERMS = 8;

/** −G″_{4j}, j = 1…FAST_TERMS (coefficients of w^{j−1}). */
export const LATTICE_COEFFS: Float64Array = latticeCoefficients(FAST_TERMS);

function latticeCoefficients(terms: number): Float64Array {
  const out = new Float64Array(terms);
  const q = Math.exp(-2 * Math.PI);
  for (let j = 1; j <= terms; j++) {
    const k = 4 * j;
    // 2ζ(4j): exact for j = 1, direct sum otherwise (tail < 1e-18 with 200 terms).
    let zeta = 0;
    if (j === 1) zeta = Math.PI ** 4 / 90;
    else for (let m = 200; m >= 1; m--) zeta += m ** -k;
    // (2π)^{4j}·8j/(4j)! by a running product, and Σ σ_{4j−1}(n) qⁿ (terms ~ n^{4j−1}e^{−2πn}, n ≤ 80).
    let pref = 8 * j;
    for (let i = 1; i <= k; i++) pref *= 2 * Math.PI / i;
    let series = 0;
    for (let n = 80; n >= 1; n--) {
      let sigma = 0;
      for (let d = 1; d <= n; d++) if (n % d === 0) sigma += d ** (k - 1);
      series += sigma * q ** n;
    }
    const g = 2 * zeta + pref * series;
    out[j - 1] = -(g - 4 - 4 * (-0.25) ** j);
  }
  return out;
}

/**
 * Velocities (u, v) of n vortices in the periodic box [−side/2, side/2)² (positions may lie outside; pair
 * separations are wrapped); returns the minimum squared minimum-image pair distance (Infinity when n < 2).
 * Method: the Weierstrass ζ form above (equal to the Weiss–McWilliams image series to ~1e-15); the field is odd,
 * so each pair is evaluated once and applied antisymmetrically.
 */
export function velocityPeriodic(
  n: number,
  x: Float64Array,
  y: Float64Array,
  g: Float64Array,
  side: number,
  u: Float64Array,
  v: Float64Array,
): number {
  u.fill(0, 0, n);
  v.fill(0, 0, n);
  const half = 0.5 * side;
  const invSide = 1 / side;
  const c = LATTICE_COEFFS;
  const c0 = c[0], c1 = c[1], c2 = c[2], c3 = c[3], c4 = c[4], c5 = c[5], c6 = c[6], c7 = c[7];
  let minR2 = Infinity;
  for (let i = 0; i < n; i++) {
    const xi = x[i], yi = y[i], gi = g[i];
    let su = 0, sv = 0;
    for (let j = i + 1; j < n; j++) {
      let dx = xi - x[j];
      let dy = yi - y[j];
      if (dx > half || dx < -half) dx -= side * Math.round(dx * invSide);
      if (dy > half || dy < -half) dy -= side * Math.round(dy * invSide);
      const r2 = dx * dx + dy * dy;
      if (r2 < minR2) minR2 = r2;
      const a = dx * invSide, b = dy * invSide;
      const z2r = a * a - b * b, z2i = 2 * a * b; // ẑ²
      const wr = z2r * z2r - z2i * z2i, wi = 2 * z2r * z2i; // w = ẑ⁴
      // P(w) = Σ c_k w^k = E(w²) + w·O(w²): two independent Horner chains in w² (real coefficients)
      const w2r = wr * wr - wi * wi, w2i = 2 * wr * wi;
      let er = c6, ei = 0, orr = c7, oi = 0, t1: number, t2: number;
      t1 = er * w2r - ei * w2i + c4;
      ei = er * w2i + ei * w2r;
      er = t1;
      t2 = orr * w2r - oi * w2i + c5;
      oi = orr * w2i + oi * w2r;
      orr = t2;
      t1 = er * w2r - ei * w2i + c2;
      ei = er * w2i + ei * w2r;
      er = t1;
      t2 = orr * w2r - oi * w2i + c3;
      oi = orr * w2i + oi * w2r;
      orr = t2;
      t1 = er * w2r - ei * w2i + c0;
      ei = er * w2i + ei * w2r;
      er = t1;
      t2 = orr * w2r - oi * w2i + c1;
      oi = orr * w2i + oi * w2r;
      orr = t2;
      const pr = er + orr * wr - oi * wi, pi = ei + orr * wi + oi * wr;
      const z3r = z2r * a - z2i * b, z3i = z2r * b + z2i * a; // ẑ³
      // rational part (9w² + 15w − 4)/(ẑ(w² + 3w − 4))
      const nr = 9 * w2r + 15 * wr - 4, ni = 9 * w2i + 15 * wi;
      const qr = w2r + 3 * wr - 4, qi = w2i + 3 * wi;
      const dr = qr * a - qi * b, di = qr * b + qi * a;
      const inv = 1 / (dr * dr + di * di);
      // F = ζ − π ẑ̄;  u = Γ Im F/(2πL), v = Γ Re F/(2πL)
      const fr = (nr * dr + ni * di) * inv + z3r * pr - z3i * pi - Math.PI * a;
      const fi = (ni * dr - nr * di) * inv + z3r * pi + z3i * pr + Math.PI * b;
      const gj = g[j];
      su += gj * fi;
      sv += gj * fr;
      u[j] -= gi * fi;
      v[j] -= gi * fr;
    }
    u[i] += su;
    v[i] += sv;
  }
  const pref = invSide / (2 * Math.PI);
  for (let i = 0; i < n; i++) {
    u[i] *= pref;
    v[i] *= pref;
  }
  return minR2;
}
