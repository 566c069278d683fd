/**
 * The `msd` observable: mean-square displacement from a fixed origin with the cluster drift removed
 * (docs/methods.md §5.1).
 *
 * Method. The origin is the first frame pushed (t₀). The tracked objects are those labelled main at t₀:
 * 2D vortices (by id), 3D Lagrangian markers only (filament points with `marker = 1`; other points are not
 * material, docs/methods.md §2.10). At each frame t, for every tracked object present,
 *
 *   Δᵢ(t) = rᵢ(t) − rᵢ(t₀) − (r_c(t) − r_c(t₀)),   r_c = the classifier's main-cluster centre,
 *
 * and
 * - `msd` = ⟨|Δᵢ|²⟩ over objects labelled main at t₀ and at t (survivor average, docs/methods.md §5.1 (a));
 * - `msd_all` = ⟨|Δᵢ|²⟩ over all tracked objects present at t, whatever their current label;
 * - `msd_count` = number of objects in the `msd` average; `msd_all_count` = in the `msd_all` average.
 * Objects that vanish (annihilated vortices, markers of removed loops) are censored at their last frame: once
 * absent from a frame they are never counted again. Averages over no object are NaN.
 * Sums are Neumaier-compensated. Scalars: `msd_final`, `msd_all_final` (values at the last frame).
 *
 * Memory: O(objects at t₀) (id table and initial positions) plus the output series.
 *
 * References: docs/methods.md §5.1; A. Einstein, Ann. Phys. 17, 549 (1905), doi:10.1002/andp.19053220806 (MSD = 2dDt);
 * censoring: E.L. Kaplan, P. Meier, J. Am. Stat. Assoc. 53, 457 (1958), doi:10.1080/01621459.1958.10501452.
 *
 * @example
 * ```ts
 * const acc = msdObservable.create(ctx);
 * for (const frame of frames) acc.push(frame, classifier.classify(frame));
 * const { series, scalars } = acc.finish(); // series.msd.v, scalars.msd_final
 * ```
 */
import type { Frame } from "../contract.ts";
import { IdTable } from "./_id_table.ts";
import type {
  Accumulator,
  Classification,
  Observable,
  ObservableContext,
  ObservableResult,
} from "./contract.ts";
import { Label } from "./labels.ts";

export const msdObservable: Observable = {
  id: "msd",
  title: "Mean-square displacement from t₀, cluster drift removed",
  needs: { fields: [], fieldsByObjects: { "filament-point": ["loop", "marker"] } },
  produces: {
    msd: "mean-square displacement from t₀ of objects main at t₀ and at t, centre drift removed (length²)",
    msd_all: "mean-square displacement from t₀ of all objects main at t₀ still present, any label (length²)",
    msd_count: "number of objects in the msd average",
    msd_all_count: "number of objects in the msd_all average",
  },
  create: (ctx) => new MsdAccumulator(ctx),
};

class MsdAccumulator implements Accumulator {
  readonly #markersOnly: boolean;
  readonly #threeD: boolean;
  readonly #slots = new IdTable(64);
  #x0 = new Float64Array(0);
  #y0 = new Float64Array(0);
  #z0 = new Float64Array(0);
  /** 1 while the object is alive (seen in every frame so far), 0 once censored. */
  #alive = new Uint8Array(0);
  #seen = new Uint8Array(0);
  #tracked = 0;
  #c0x = Number.NaN;
  #c0y = Number.NaN;
  #c0z = Number.NaN;
  #started = false;
  readonly #t: number[] = [];
  readonly #msd: number[] = [];
  readonly #msdAll: number[] = [];
  readonly #count: number[] = [];
  readonly #countAll: number[] = [];

  constructor(ctx: ObservableContext) {
    this.#markersOnly = ctx.capabilities.objects === "filament-point";
    this.#threeD = ctx.capabilities.dimension === 3;
  }

  push(frame: Frame, c: Classification): void {
    if (!this.#started) this.#start(frame, c);
    const n = frame.n;
    const id = frame.id, x = frame.x, y = frame.y, z = frame.z, marker = frame.marker, labels = c.labels;
    const dcx = c.centre[0] - this.#c0x;
    const dcy = c.centre[1] - this.#c0y;
    const dcz = this.#threeD ? c.centre[2] - this.#c0z : 0;
    const alive = this.#alive;
    const seen = this.#seen;
    seen.fill(0, 0, this.#tracked);
    let sMain = 0, cMain = 0, nMain = 0, sAll = 0, cAll = 0, nAll = 0;
    for (let i = 0; i < n; i++) {
      if (this.#markersOnly && (marker === null || marker[i] !== 1)) continue;
      const s = this.#slots.get(id[i]);
      if (s < 0 || alive[s] === 0) continue;
      seen[s] = 1;
      const dx = x[i] - this.#x0[s] - dcx;
      const dy = y[i] - this.#y0[s] - dcy;
      const dz = z === null ? 0 : z[i] - this.#z0[s] - dcz;
      const v = dx * dx + dy * dy + dz * dz;
      let t = sAll + v;
      cAll += Math.abs(sAll) >= v ? (sAll - t) + v : (v - t) + sAll;
      sAll = t;
      nAll++;
      if (labels[i] === Label.Main) {
        t = sMain + v;
        cMain += Math.abs(sMain) >= v ? (sMain - t) + v : (v - t) + sMain;
        sMain = t;
        nMain++;
      }
    }
    // Censoring: an object missing from this frame is out for good.
    for (let s = 0; s < this.#tracked; s++) if (seen[s] === 0) alive[s] = 0;
    this.#t.push(frame.t);
    this.#msd.push(nMain > 0 ? (sMain + cMain) / nMain : Number.NaN);
    this.#msdAll.push(nAll > 0 ? (sAll + cAll) / nAll : Number.NaN);
    this.#count.push(nMain);
    this.#countAll.push(nAll);
  }

  #start(frame: Frame, c: Classification): void {
    this.#started = true;
    this.#c0x = c.centre[0];
    this.#c0y = c.centre[1];
    this.#c0z = this.#threeD ? c.centre[2] : 0;
    const n = frame.n;
    this.#x0 = new Float64Array(n);
    this.#y0 = new Float64Array(n);
    this.#z0 = new Float64Array(n);
    this.#alive = new Uint8Array(n);
    this.#seen = new Uint8Array(n);
    const marker = frame.marker;
    for (let i = 0; i < n; i++) {
      if (c.labels[i] !== Label.Main) continue;
      if (this.#markersOnly && (marker === null || marker[i] !== 1)) continue;
      if (this.#slots.get(frame.id[i]) >= 0) continue; // a repeated id keeps its first position
      const s = this.#tracked++;
      this.#slots.set(frame.id[i], s);
      this.#x0[s] = frame.x[i];
      this.#y0[s] = frame.y[i];
      this.#z0[s] = frame.z === null ? 0 : frame.z[i];
      this.#alive[s] = 1;
    }
  }

  finish(): ObservableResult {
    const t = this.#t;
    const last = (v: number[]) => v.length > 0 ? v[v.length - 1] : Number.NaN;
    return {
      series: {
        msd: { t, v: this.#msd },
        msd_all: { t, v: this.#msdAll },
        msd_count: { t, v: this.#count },
        msd_all_count: { t, v: this.#countAll },
      },
      scalars: { msd_final: last(this.#msd), msd_all_final: last(this.#msdAll) },
      events: [],
    };
  }
}
