/**
 * Classifier for 2D point vortices: main cluster, evaporated dipoles, stray lone vortices (docs/methods.md §4.1, §4.3).
 *
 * Per frame, in this order:
 *
 * 1. **Main cluster, centre and size.** The main set is every vortex whose sticky label (from the earlier
 *    frames; new ids start as main) is `Main`. Centre = unweighted centroid with iterative 3 R_rms trimming,
 *    R_rms about it (see `_geometry.ts`). These are the values returned for the frame: labels decided in this
 *    frame take effect on the centre from the next frame on.
 * 2. **Spacing ℓ.** ℓ = n^{-1/2} with n = N_main / (2π R_rms²), N_main and R_rms from the trimmed main set.
 *    For a uniform disk of radius R_c, R_rms² = R_c²/2, so 2π R_rms² = π R_c² is exactly the disk area and ℓ is
 *    the initial-condition spacing of docs/methods.md §3.2; unlike the convex hull or the maximum radius, R_rms does
 *    not jump when one edge vortex leaves. Undefined (NaN, no dipole possible) when N_main < 2 or R_rms = 0.
 * 3. **Dipoles** (criteria 1–2 of §4.1): vortices with non-zero circulation whose nearest neighbour (among all
 *    vortices with circulation) lies within d < f·ℓ, mutually, and of opposite sign. Since only neighbours
 *    closer than f·ℓ matter, a spatial hash grid of cell f·ℓ finds them in O(N) expected time: a pair that is
 *    mutually nearest within that radius is mutually nearest overall.
 * 4. **Pair velocity.** Frames are all a classifier sees, so V_pair is the finite difference of the pair
 *    midpoint between the previous frame and this one, V = (P(t) − P(t_prev)) / (t − t_prev), using the same
 *    two ids in both frames. A pair that was not complete in the previous frame has no velocity and fails.
 *    For a steadily translating dipole this secant velocity is exact.
 * 5. **Evaporation criteria** (3–5 of §4.1), with κ = (|Γ_i| + |Γ_j|)/2 and U = κ/(2πd):
 *    speed: ||V| − U| ≤ tol·U; direction: cos(V, ê) ≥ √(1 − tol²) with ê = sign(Γ_i) ẑ×(z_j − z_i)/d the
 *    self-propulsion direction (a velocity within tol·U of U ê deviates by at most asin(tol) from ê;
 *    for tol ≥ 1 the bound is cos ≥ 0); outward: V·(P − c) > c_out |V||P − c|; position: |P − c| > k·R_rms.
 * 6. **Sticky labels.** A pair meeting all criteria in K consecutive frames (same partner) becomes
 *    `Evaporated` (both vortices; event `evaporation` with the ids and criteria values). A vortex outside
 *    k·R_rms (own position) that is in no dipole (criterion 1–2) for K consecutive frames becomes `Stray`
 *    (event `stray`), also an evaporated vortex whose partner vanished or left. An evaporated or stray vortex
 *    that fails the evaporation criteria while inside k·R_rms for K consecutive frames returns to `Main`
 *    (event `recapture`). Vortices that disappear (annihilation) are simply absent from later frames.
 *
 * Cost: O(N) expected per frame (hash grid, id hash table); buffers grow only when N or the number of ids ever
 * seen grows. Per-id state is kept for every id ever seen (O(ids)).
 *
 * References: docs/methods.md §4.1 and §4.3; dipole speed U = Γ/(2πd): P.G. Saffman, Vortex Dynamics (CUP, 1992) §7.3,
 * doi:10.1017/CBO9780511624063. Mutual-nearest-neighbour dipoles: R.N. Valani, A.J. Groszek, T.P. Simula,
 * New J. Phys. 20, 053038 (2018), doi:10.1088/1367-2630/aac0bb. Spatial hashing: M. Teschner et al.,
 * "Optimized spatial hashing for collision detection of deformable objects", VMV 2003, 47.
 *
 * @example
 * ```ts
 * const classifier = createDipoleClassifier({ capabilities, controls, classification: DEFAULT_CLASSIFICATION });
 * const c = classifier.classify(frame); // c.labels[i] ∈ {Label.Main, Label.Evaporated, Label.Stray}
 * ```
 */
import type { EngineEvent, Frame } from "../contract.ts";
import { assertClassificationConfig } from "./_config.ts";
import {
  bucketCount,
  ensureBucketStarts,
  ensureI32,
  ensureU8,
  fillBuckets,
  newCentreResult,
  trimmedCentre,
} from "./_geometry.ts";
import { IdTable } from "./_id_table.ts";
import type { Classification, Classifier, ObservableContext } from "./contract.ts";
import { Label } from "./labels.ts";

const NO_EVENTS: readonly EngineEvent[] = Object.freeze([]);

/**
 * Creates the 2D dipole classifier. Throws a RangeError when the thresholds are invalid.
 *
 * @example
 * ```ts
 * const classifier = createDipoleClassifier(ctx);
 * for (const frame of frames) handle(classifier.classify(frame));
 * ```
 */
export function createDipoleClassifier(ctx: ObservableContext): Classifier {
  assertClassificationConfig(ctx.classification);
  if (ctx.capabilities.dimension !== 2) {
    throw new RangeError(
      `the dipole classifier is planar; the engine declares dimension ${ctx.capabilities.dimension}`,
    );
  }
  return new DipoleClassifier(ctx);
}

class DipoleClassifier implements Classifier {
  readonly #f: number;
  readonly #k: number;
  readonly #sticky: number;
  readonly #cosOut: number;
  readonly #tol: number;
  readonly #cosDir: number;

  // Per-id state, indexed by slot (persistent id → slot).
  readonly #slots = new IdTable(64);
  #nSlots = 0;
  #label = new Uint8Array(64);
  #evapStreak = new Int32Array(64);
  #partner = new Int32Array(64);
  #strayStreak = new Int32Array(64);
  #insideStreak = new Int32Array(64);
  #lastX = new Float64Array(64);
  #lastY = new Float64Array(64);
  #lastFrame = new Int32Array(64);

  // Per-frame scratch, indexed by object index.
  #slotOf = new Int32Array(0);
  #labels = new Uint8Array(0);
  #keep = new Uint8Array(0);
  #nn = new Int32Array(0);
  #pairOk = new Uint8Array(0);
  #inDipole = new Uint8Array(0);
  #bucketOf = new Int32Array(0);
  #order = new Int32Array(0);
  #bucketStart = new Int32Array(0);

  #frameCount = 0;
  #prevT = Number.NaN;
  readonly #centre = newCentreResult();
  #events: EngineEvent[] = [];

  constructor(ctx: ObservableContext) {
    const c = ctx.classification;
    this.#f = c.separationFactor;
    this.#k = c.radiusFactor;
    this.#sticky = c.stickyFrames;
    this.#cosOut = c.outwardCosine;
    this.#tol = c.speedTolerance;
    this.#cosDir = c.speedTolerance < 1 ? Math.sqrt(1 - c.speedTolerance * c.speedTolerance) : 0;
  }

  classify(frame: Frame): Classification {
    const n = frame.n;
    this.#ensureScratch(n);
    this.#events = [];
    const slotOf = this.#slotOf;
    const keep = this.#keep;
    const id = frame.id;
    for (let i = 0; i < n; i++) {
      const s = this.#slotFor(id[i]);
      slotOf[i] = s;
      keep[i] = this.#label[s] === Label.Main ? 1 : 0;
    }

    // 1. Centre and size of the main cluster.
    const centre = trimmedCentre(n, frame.x, frame.y, null, null, keep, this.#centre);
    const cx = centre.cx;
    const cy = centre.cy;
    const rms = centre.rms;
    // 2. Spacing from the main cluster: ℓ = (2π R_rms² / N_main)^{1/2}.
    const spacing = centre.count >= 2 && rms > 0 ? rms * Math.sqrt(2 * Math.PI / centre.count) : Number.NaN;
    const radiusLimit = this.#k * rms;

    // 3. Mutual nearest neighbours within f·ℓ.
    const nn = this.#nn;
    const inDipole = this.#inDipole;
    const pairOk = this.#pairOk;
    nn.fill(-1, 0, n);
    inDipole.fill(0, 0, n);
    pairOk.fill(0, 0, n);
    const circ = frame.circulation;
    const separationLimit = this.#f * spacing;
    if (circ !== null && separationLimit > 0 && Number.isFinite(separationLimit)) {
      this.#nearestWithin(frame, circ, separationLimit);
    }

    // 4–6. Dipole criteria and sticky transitions of pairs.
    const dt = frame.t - this.#prevT;
    const hasPrev = dt > 0 && this.#frameCount > 0;
    const x = frame.x;
    const y = frame.y;
    if (circ !== null) {
      for (let i = 0; i < n; i++) {
        const j = nn[i];
        if (j <= i || nn[j] !== i || !(circ[i] * circ[j] < 0)) continue;
        inDipole[i] = 1;
        inDipole[j] = 1;
        const si = slotOf[i];
        const sj = slotOf[j];
        if (
          !hasPrev || this.#lastFrame[si] !== this.#frameCount - 1 ||
          this.#lastFrame[sj] !== this.#frameCount - 1
        ) {
          continue;
        }
        const dx = x[j] - x[i];
        const dy = y[j] - y[i];
        const d = Math.sqrt(dx * dx + dy * dy);
        const px = 0.5 * (x[i] + x[j]);
        const py = 0.5 * (y[i] + y[j]);
        const vx = (px - 0.5 * (this.#lastX[si] + this.#lastX[sj])) / dt;
        const vy = (py - 0.5 * (this.#lastY[si] + this.#lastY[sj])) / dt;
        const speed = Math.sqrt(vx * vx + vy * vy);
        const kappa = 0.5 * (Math.abs(circ[i]) + Math.abs(circ[j]));
        const expected = kappa / (2 * Math.PI * d);
        const speedError = Math.abs(speed - expected) / expected;
        const sign = circ[i] > 0 ? 1 : -1;
        // ê = sign(Γ_i) ẑ × (z_j − z_i) / d, with ẑ × (a, b) = (−b, a).
        const ex = -sign * dy / d;
        const ey = sign * dx / d;
        const directionCosine = speed > 0 ? (vx * ex + vy * ey) / speed : Number.NaN;
        const rx = px - cx;
        const ry = py - cy;
        const distance = Math.sqrt(rx * rx + ry * ry);
        const outwardCosine = speed > 0 && distance > 0
          ? (vx * rx + vy * ry) / (speed * distance)
          : Number.NaN;
        const ok = speedError <= this.#tol && directionCosine >= this.#cosDir &&
          outwardCosine > this.#cosOut && distance > radiusLimit;
        if (!ok) continue;
        pairOk[i] = 1;
        pairOk[j] = 1;
        const streakI = this.#partner[si] === sj ? this.#evapStreak[si] + 1 : 1;
        const streakJ = this.#partner[sj] === si ? this.#evapStreak[sj] + 1 : 1;
        this.#evapStreak[si] = streakI;
        this.#evapStreak[sj] = streakJ;
        this.#partner[si] = sj;
        this.#partner[sj] = si;
        this.#strayStreak[si] = this.#strayStreak[sj] = 0;
        this.#insideStreak[si] = this.#insideStreak[sj] = 0;
        const streak = Math.min(streakI, streakJ);
        if (
          streak >= this.#sticky &&
          (this.#label[si] !== Label.Evaporated || this.#label[sj] !== Label.Evaporated)
        ) {
          this.#events.push({
            t: frame.t,
            kind: "evaporation",
            ids: [id[i], id[j]],
            data: {
              separation: d,
              spacing,
              separationLimit,
              speed,
              expectedSpeed: expected,
              speedError,
              directionCosine,
              outwardCosine,
              distance,
              radiusLimit,
              rmsRadius: rms,
              centreX: cx,
              centreY: cy,
              x: px,
              y: py,
              frames: streak,
              fromLabelI: this.#label[si],
              fromLabelJ: this.#label[sj],
            },
          });
          this.#label[si] = Label.Evaporated;
          this.#label[sj] = Label.Evaporated;
        }
      }
    }

    // 6. Stray and recapture for everything not in an evaporating pair this frame.
    const sticky = this.#sticky;
    for (let i = 0; i < n; i++) {
      const s = slotOf[i];
      if (pairOk[i] === 1) continue;
      this.#evapStreak[s] = 0;
      this.#partner[s] = -1;
      const rx = x[i] - cx;
      const ry = y[i] - cy;
      const distance = Math.sqrt(rx * rx + ry * ry);
      // NaN radius limit (no main cluster): no object counts as outside or inside.
      const outside = distance > radiusLimit;
      const inside = distance <= radiusLimit;
      this.#strayStreak[s] = outside && inDipole[i] === 0 ? this.#strayStreak[s] + 1 : 0;
      this.#insideStreak[s] = inside ? this.#insideStreak[s] + 1 : 0;
      const label = this.#label[s];
      const stray = label !== Label.Stray && this.#strayStreak[s] >= sticky;
      if (stray || (label !== Label.Main && this.#insideStreak[s] >= sticky)) {
        // Stray (outside, in no dipole for K frames) or recaptured (inside for K frames).
        this.#label[s] = stray ? Label.Stray : Label.Main;
        if (!stray) this.#strayStreak[s] = 0;
        this.#events.push({
          t: frame.t,
          kind: stray ? "stray" : "recapture",
          ids: [id[i]],
          data: {
            fromLabel: label,
            distance,
            radiusLimit,
            rmsRadius: rms,
            centreX: cx,
            centreY: cy,
            frames: sticky,
          },
        });
      }
    }

    // Remember positions for the next frame's velocities, and write the labels.
    const labels = this.#labels;
    for (let i = 0; i < n; i++) {
      const s = slotOf[i];
      this.#lastX[s] = x[i];
      this.#lastY[s] = y[i];
      this.#lastFrame[s] = this.#frameCount;
      labels[i] = this.#label[s];
    }
    this.#prevT = frame.t;
    this.#frameCount++;
    return {
      labels,
      centre: [cx, cy],
      rmsRadius: rms,
      events: this.#events.length === 0 ? NO_EVENTS : this.#events,
    };
  }

  /** Slot of a vortex id, creating fresh `Main` state on first sight. */
  #slotFor(key: number): number {
    let s = this.#slots.get(key);
    if (s >= 0) return s;
    s = this.#nSlots++;
    if (s >= this.#label.length) this.#growSlots(2 * this.#label.length);
    this.#slots.set(key, s);
    this.#label[s] = Label.Main;
    this.#evapStreak[s] = 0;
    this.#partner[s] = -1;
    this.#strayStreak[s] = 0;
    this.#insideStreak[s] = 0;
    this.#lastFrame[s] = -2;
    return s;
  }

  #growSlots(cap: number): void {
    const grow = <T extends Uint8Array | Int32Array | Float64Array>(a: T, make: (n: number) => T): T => {
      const b = make(cap);
      b.set(a);
      return b;
    };
    this.#label = grow(this.#label, (k) => new Uint8Array(k));
    this.#evapStreak = grow(this.#evapStreak, (k) => new Int32Array(k));
    this.#partner = grow(this.#partner, (k) => new Int32Array(k));
    this.#strayStreak = grow(this.#strayStreak, (k) => new Int32Array(k));
    this.#insideStreak = grow(this.#insideStreak, (k) => new Int32Array(k));
    this.#lastX = grow(this.#lastX, (k) => new Float64Array(k));
    this.#lastY = grow(this.#lastY, (k) => new Float64Array(k));
    this.#lastFrame = grow(this.#lastFrame, (k) => new Int32Array(k));
  }

  #ensureScratch(n: number): void {
    if (this.#slotOf.length >= n && this.#bucketStart.length > 0) return;
    this.#slotOf = ensureI32(this.#slotOf, n);
    this.#labels = ensureU8(this.#labels, n);
    this.#keep = ensureU8(this.#keep, n);
    this.#nn = ensureI32(this.#nn, n);
    this.#pairOk = ensureU8(this.#pairOk, n);
    this.#inDipole = ensureU8(this.#inDipole, n);
    this.#bucketOf = ensureI32(this.#bucketOf, n);
    this.#order = ensureI32(this.#order, n);
    this.#bucketStart = ensureBucketStarts(this.#bucketStart, this.#slotOf.length);
  }

  /**
   * nn[i] = index of the nearest vortex with circulation closer than `radius` to vortex i (strictly), or -1.
   * Hash grid of cell size `radius`: cells (⌊x/r⌋, ⌊y/r⌋) hashed into a power-of-two bucket table, objects
   * counting-sorted by bucket; each query scans the 3 × 3 neighbouring cells' buckets (collisions only add
   * candidates, which the exact distance test rejects).
   */
  #nearestWithin(frame: Frame, circ: Float64Array, radius: number): void {
    const n = frame.n;
    const x = frame.x;
    const y = frame.y;
    const nn = this.#nn;
    const bucketOf = this.#bucketOf;
    const order = this.#order;
    const start = this.#bucketStart;
    const nb = bucketCount(n);
    const mask = nb - 1;
    const inv = 1 / radius;
    start.fill(0, 0, nb + 1);
    for (let i = 0; i < n; i++) {
      const gx = Math.floor(x[i] * inv);
      const gy = Math.floor(y[i] * inv);
      if (circ[i] === 0 || !Number.isFinite(gx) || !Number.isFinite(gy)) {
        bucketOf[i] = -1;
        continue;
      }
      const b = cellHash(gx, gy) & mask;
      bucketOf[i] = b;
      start[b + 1]++;
    }
    fillBuckets(n, nb, bucketOf, start, order);
    const r2 = radius * radius;
    for (let i = 0; i < n; i++) {
      if (bucketOf[i] < 0) continue;
      const gx = Math.floor(x[i] * inv);
      const gy = Math.floor(y[i] * inv);
      let best = -1;
      let bestD2 = r2;
      for (let ox = -1; ox <= 1; ox++) {
        for (let oy = -1; oy <= 1; oy++) {
          const b = cellHash(gx + ox, gy + oy) & mask;
          const end = start[b + 1];
          for (let p = start[b]; p < end; p++) {
            const j = order[p];
            if (j === i) continue;
            const dx = x[j] - x[i];
            const dy = y[j] - y[i];
            const d2 = dx * dx + dy * dy;
            if (d2 < bestD2 || (d2 === bestD2 && best >= 0 && j < best)) {
              bestD2 = d2;
              best = j;
            }
          }
        }
      }
      nn[i] = best;
    }
  }
}

/** Hash of integer cell coordinates (wrapped to 32 bits consistently for neighbours). */
function cellHash(gx: number, gy: number): number {
  return (Math.imul(gx | 0, 0x8da6b343) ^ Math.imul(gy | 0, 0xd8163841)) >>> 0;
}
