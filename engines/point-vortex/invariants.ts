/**
 * Invariants of point-vortex motion: Hamiltonian H (interaction energy), linear impulse (Q, P) and angular
 * impulse I, with compensated summation; plus the share of H carried by a subset of vortices (what their
 * removal takes away), so invariant drift can be measured across annihilations.
 *
 * Method (κ = 1, per unit ρ_s):
 *   unbounded: H = −(1/4π) Σ_{i≠j} Γ_iΓ_j ln|z_i − z_j|;
 *   disk (R):  H adds (1/4π) Σ_{i,j} Γ_iΓ_j ln|R² − z_i z̄_j| (self terms i = j included);
 *   periodic:  H = −Σ_{i<j} Γ_iΓ_j G_L(r_i − r_j) (Weiss–McWilliams Green's function, see periodic.ts);
 *   Q = Σ Γ_i x_i, P = Σ Γ_i y_i, I = Σ Γ_i |r_i|².
 * Long reductions use Neumaier's compensated sum.
 *
 * References: H. Aref, Annu. Rev. Fluid Mech. 15, 345 (1983), doi:10.1146/annurev.fl.15.010183.002021;
 * P.K. Newton, The N-Vortex Problem (Springer 2001) §2.1, §3.1, doi:10.1007/978-1-4684-9290-3;
 * A. Neumaier, ZAMM 54, 39 (1974), doi:10.1002/zamm.19740540106.
 *
 * @example
 * ```ts
 * import { hamiltonian } from "./invariants.ts";
 * const h = hamiltonian({ kind: "unbounded" }, 2, Float64Array.of(0, 1), Float64Array.of(0, 0),
 *   Float64Array.of(1, -1)); // = (1/2π) ln 1 = 0
 * ```
 */
import { periodicGreen } from "./periodic.ts";

/** The geometric part of the domain that the invariants need. */
export type DomainGeometry =
  | { readonly kind: "unbounded" }
  | { readonly kind: "disk"; readonly radius: number }
  | { readonly kind: "periodic"; readonly side: number };

const INV_FOUR_PI = 1 / (4 * Math.PI);

/** Neumaier compensated accumulator. */
export class CompensatedSum {
  #s = 0;
  #c = 0;
  add(v: number): void {
    const t = this.#s + v;
    if (Math.abs(this.#s) >= Math.abs(v)) this.#c += (this.#s - t) + v;
    else this.#c += (v - t) + this.#s;
    this.#s = t;
  }
  get value(): number {
    return this.#s + this.#c;
  }
}

/** Interaction energy of the pair (i, j) in the domain (counted once). */
export function pairEnergy(
  d: DomainGeometry,
  xi: number,
  yi: number,
  gi: number,
  xj: number,
  yj: number,
  gj: number,
): number {
  const dx = xi - xj, dy = yi - yj;
  switch (d.kind) {
    case "unbounded":
      return -INV_FOUR_PI * gi * gj * Math.log(dx * dx + dy * dy);
    case "disk": {
      const r2 = d.radius * d.radius;
      const dRe = xi * xj + yi * yj - r2;
      const dIm = yi * xj - xi * yj;
      return INV_FOUR_PI * gi * gj * (Math.log(dRe * dRe + dIm * dIm) - Math.log(dx * dx + dy * dy));
    }
    case "periodic":
      return -gi * gj * periodicGreen(dx, dy, d.side);
  }
}

/** Energy of one vortex with its own image(s) (disk: (Γ²/4π) ln(R² − |z|²); otherwise 0). */
export function selfEnergy(d: DomainGeometry, x: number, y: number, g: number): number {
  return d.kind === "disk" ? INV_FOUR_PI * g * g * Math.log(d.radius * d.radius - x * x - y * y) : 0;
}

/** Hamiltonian of the first n vortices (positions may be wrapped or unwrapped in a periodic box). */
export function hamiltonian(
  d: DomainGeometry,
  n: number,
  x: Float64Array,
  y: Float64Array,
  g: Float64Array,
): number {
  const sum = new CompensatedSum();
  for (let i = 0; i < n; i++) {
    sum.add(selfEnergy(d, x[i], y[i], g[i]));
    for (let j = i + 1; j < n; j++) sum.add(pairEnergy(d, x[i], y[i], g[i], x[j], y[j], g[j]));
  }
  return sum.value;
}

/**
 * The part of H that disappears when the vortices flagged in `removed` are deleted: every pair with at least
 * one removed member, plus the removed vortices' self terms. O(n · removed).
 */
export function removedEnergy(
  d: DomainGeometry,
  n: number,
  x: Float64Array,
  y: Float64Array,
  g: Float64Array,
  removed: Uint8Array,
): number {
  const sum = new CompensatedSum();
  for (let i = 0; i < n; i++) {
    if (removed[i] === 0) continue;
    sum.add(selfEnergy(d, x[i], y[i], g[i]));
    for (let j = 0; j < n; j++) {
      if (j === i || (removed[j] !== 0 && j < i)) continue;
      sum.add(pairEnergy(d, x[i], y[i], g[i], x[j], y[j], g[j]));
    }
  }
  return sum.value;
}

/** Linear and angular impulse, written into a caller-owned record. */
export interface Moments {
  impulseX: number;
  impulseY: number;
  angularImpulse: number;
  /** Σ|Γ_i||r_i| and Σ|Γ_i||r_i|²: scales for relative drifts when the invariants themselves are ~0. */
  absFirst: number;
  absSecond: number;
}

/** Moments of the vortices i < n with `mask[i]` ≠ 0 (all vortices when mask is null). */
export function moments(
  n: number,
  x: Float64Array,
  y: Float64Array,
  g: Float64Array,
  mask: Uint8Array | null,
  out: Moments,
): Moments {
  const q = new CompensatedSum(), p = new CompensatedSum(), a = new CompensatedSum();
  const f = new CompensatedSum(), s = new CompensatedSum();
  for (let i = 0; i < n; i++) {
    if (mask !== null && mask[i] === 0) continue;
    const r2 = x[i] * x[i] + y[i] * y[i];
    q.add(g[i] * x[i]);
    p.add(g[i] * y[i]);
    a.add(g[i] * r2);
    f.add(Math.abs(g[i]) * Math.sqrt(r2));
    s.add(Math.abs(g[i]) * r2);
  }
  out.impulseX = q.value;
  out.impulseY = p.value;
  out.angularImpulse = a.value;
  out.absFirst = f.value;
  out.absSecond = s.value;
  return out;
}
