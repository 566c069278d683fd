/**
 * Vortex–antivortex annihilation: which vortices to remove after an accepted step.
 *
 * Method: a hashed cell list with cell side d_ann finds every opposite-sign pair closer than d_ann (minimum
 * image in a periodic box). Candidates are taken greedily in increasing distance, ties broken by the smaller and
 * then the larger vortex id, each vortex at most once, so the outcome does not depend on array order. In a
 * disk of radius R, every remaining vortex with R − |z| < d_ann/2 (closer to its image than d_ann) annihilates
 * with its image. The step cap Δt ≤ c·d_min²/κ keeps a pair from jumping across the threshold in one step.
 *
 * References: O. Törnkvist, E. Schröder, Phys. Rev. Lett. 78, 1908 (1997), doi:10.1103/PhysRevLett.78.1908
 * (dissipative point vortices with annihilation); cell lists: M.P. Allen, D.J. Tildesley, Computer Simulation of
 * Liquids, 2nd ed. (OUP 2017) §5.3. Greedy ordering and tie rule: common practice, no source.
 *
 * @example
 * ```ts
 * import { AnnihilationSearch } from "./annihilation.ts";
 * const search = new AnnihilationSearch(3, 0.1, { kind: "unbounded" });
 * const removed = search.find(3, Float64Array.of(0, 0.05, 5), Float64Array.of(0, 0, 0),
 *   Float64Array.of(1, -1, 1), Int32Array.of(0, 1, 2)); // 2: the pair (0, 1)
 * ```
 */
import { CellList } from "../_cells.ts";
import type { DomainGeometry } from "./invariants.ts";

export class AnnihilationSearch {
  /** 1 for vortices removed by the last `find` (indices into the arrays passed to it). */
  readonly removed: Uint8Array;
  /** Annihilating pairs of the last `find`, in the order they were taken: array indices and separations. */
  pairCount = 0;
  readonly pairI: Int32Array;
  readonly pairJ: Int32Array;
  readonly pairSeparation: Float64Array;
  /** Vortices annihilated at the disk wall by the last `find` (array indices, ascending). */
  wallCount = 0;
  readonly wall: Int32Array;

  readonly #d: number;
  readonly #d2: number;
  readonly #domain: DomainGeometry;
  readonly #side: number;
  readonly #cells: CellList;
  readonly #near: Int32Array;
  #candI: Int32Array;
  #candJ: Int32Array;
  #candD2: Float64Array;
  #order: Int32Array;
  #candIdI: Int32Array;
  #candIdJ: Int32Array;
  readonly #byDistance: (a: number, b: number) => number;

  /** Search for up to `capacity` vortices with annihilation distance `distance` > 0. */
  constructor(capacity: number, distance: number, domain: DomainGeometry) {
    const c = Math.max(1, capacity);
    this.#d = distance;
    this.#d2 = distance * distance;
    this.#domain = domain;
    this.#side = domain.kind === "periodic" ? domain.side : 0;
    this.#cells = new CellList(c, distance, this.#side);
    this.#near = new Int32Array(c);
    this.removed = new Uint8Array(c);
    this.pairI = new Int32Array(c);
    this.pairJ = new Int32Array(c);
    this.pairSeparation = new Float64Array(c);
    this.wall = new Int32Array(c);
    const k = 16;
    this.#candI = new Int32Array(k);
    this.#candJ = new Int32Array(k);
    this.#candD2 = new Float64Array(k);
    this.#order = new Int32Array(k);
    this.#candIdI = new Int32Array(k);
    this.#candIdJ = new Int32Array(k);
    this.#byDistance = (a, b) =>
      this.#candD2[a] - this.#candD2[b] || this.#candIdI[a] - this.#candIdI[b] ||
      this.#candIdJ[a] - this.#candIdJ[b];
  }

  /**
   * Finds the vortices to remove among the first n (positions x, y; circulations g; ids id); fills `removed`,
   * the pair list and the wall list, and returns the number of vortices removed.
   */
  find(n: number, x: Float64Array, y: Float64Array, g: Float64Array, id: Int32Array): number {
    const removed = this.removed;
    removed.fill(0, 0, n);
    this.pairCount = 0;
    this.wallCount = 0;
    const side = this.#side, d2 = this.#d2, cells = this.#cells, near = this.#near;
    cells.clear();
    for (let i = 0; i < n; i++) cells.insert(i, x[i], y[i]);
    let m = 0;
    for (let i = 0; i < n; i++) {
      const k = cells.query(x[i], y[i], near);
      for (let q = 0; q < k; q++) {
        const j = near[q];
        if (j <= i || g[i] * g[j] >= 0) continue;
        let dx = x[i] - x[j], dy = y[i] - y[j];
        if (side > 0) {
          dx -= side * Math.round(dx / side);
          dy -= side * Math.round(dy / side);
        }
        const r2 = dx * dx + dy * dy;
        if (r2 < d2) {
          if (m === this.#candI.length) this.#grow();
          this.#candI[m] = i;
          this.#candJ[m] = j;
          this.#candD2[m] = r2;
          this.#candIdI[m] = Math.min(id[i], id[j]);
          this.#candIdJ[m] = Math.max(id[i], id[j]);
          m++;
        }
      }
    }
    let count = 0;
    if (m > 0) {
      for (let q = 0; q < m; q++) this.#order[q] = q;
      const order = m === 1 ? this.#order : this.#order.subarray(0, m).sort(this.#byDistance);
      for (let q = 0; q < m; q++) {
        const c = order[q];
        const i = this.#candI[c], j = this.#candJ[c];
        if (removed[i] !== 0 || removed[j] !== 0) continue;
        removed[i] = 1;
        removed[j] = 1;
        this.pairI[this.pairCount] = i;
        this.pairJ[this.pairCount] = j;
        this.pairSeparation[this.pairCount] = Math.sqrt(this.#candD2[c]);
        this.pairCount++;
        count += 2;
      }
    }
    if (this.#domain.kind === "disk") {
      const limit = this.#domain.radius - 0.5 * this.#d;
      const limit2 = limit * limit;
      for (let i = 0; i < n; i++) {
        if (removed[i] === 0 && (limit <= 0 || x[i] * x[i] + y[i] * y[i] > limit2)) {
          removed[i] = 1;
          this.wall[this.wallCount++] = i;
          count++;
        }
      }
    }
    return count;
  }

  #grow(): void {
    const k = 2 * this.#candI.length;
    const gi = new Int32Array(k), gj = new Int32Array(k), gd = new Float64Array(k);
    const gii = new Int32Array(k), gij = new Int32Array(k);
    gi.set(this.#candI);
    gj.set(this.#candJ);
    gd.set(this.#candD2);
    gii.set(this.#candIdI);
    gij.set(this.#candIdJ);
    this.#candI = gi;
    this.#candJ = gj;
    this.#candD2 = gd;
    this.#candIdI = gii;
    this.#candIdJ = gij;
    this.#order = new Int32Array(k);
  }
}
