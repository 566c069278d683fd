/**
 * Classifier for 3D vortex filaments: main tangle, evaporated small fast loops, stray loops (docs/methods.md §4.2, §4.3).
 *
 * Frames list filament points loop by loop (`loop` field; each loop contiguous and in order, its last point
 * linked to its first). Segment i joins point i to the next point of its loop. Per frame, in this order:
 *
 * 1. **Loops.** Per loop: length ℓ_loop = Σ segment lengths, R_eff = ℓ_loop / 2π, centroid X = length-weighted
 *    mean of segment midpoints.
 * 2. **Loop identity** between consecutive frames. A loop inherits the track of the previous-frame loop with
 *    which it shares the most marker ids (ties: earlier previous loop). When several loops claim the same
 *    previous loop (a split by reconnection), the one sharing most markers keeps the track and the others start
 *    new tracks that inherit its label (a piece of an escaped loop stays escaped) but restart their criteria.
 *    A loop without markers falls back to the previous marker-less loop with the same engine loop id, if
 *    no marker-sharing loop claims it. Markers are the only point ids that survive remeshing (§2.10), hence
 *    markers rather than all point ids. Unmatched loops start as `Main`.
 * 3. **Main tangle, centre and size.** Segments of loops whose sticky label (from earlier frames) is `Main`:
 *    length-weighted centroid of segment midpoints with 3 R_rms trimming, R_rms length-weighted
 *    (`_geometry.ts`). Returned for this frame; this frame's decisions act on the centre from the next frame.
 * 4. **Spacing ℓ = L^{-1/2}**, L = (kept main length) / ((4/3)π R_c³) with R_c = (5/3)^{1/2} R_rms: for a
 *    uniform ball of radius R_c, R_rms² = 3R_c²/5, so this is the nominal line density of docs/methods.md §3.1 for a
 *    uniformly filled ball, measured robustly through R_rms.
 * 5. **Velocity** of a tracked loop: finite difference of its centroid between the previous frame and this one.
 * 6. **Evaporation criteria** (docs/methods.md §4.2), all required:
 *    (1) R_eff < f·ℓ; (2) |V| > 2·median |V| over all loops with a velocity this frame, and
 *    U/(1 + tol) ≤ |V| ≤ U·(1 + tol) with the ring speed U = (κ/4πR_eff)[ln(8R_eff/a₀) − C], C = 3/4 − γ_E
 *    (straight-segment Biot–Savart sums, docs/methods.md §2.2), κ = mean |circulation| of the loop's points (1 when the
 *    engine has no circulation field: κ is the engine's circulation unit); (3) cosine between V and X − X_c
 *    > c_out; (4) isolated — no point of another loop closer than ℓ to a point of this one — or
 *    |X − X_c| > k·R_rms. Point-to-point distance stands for curve distance (resolution ≤ ℓ/10, docs/methods.md §8).
 * 7. **Sticky labels.** All criteria in K consecutive frames → `Evaporated` (event `evaporation`, ids = the
 *    loop's marker ids, data: track id and criteria values). A loop beyond k·R_rms failing the criteria for K
 *    consecutive frames → `Stray` (event `stray`); an evaporated loop stays evaporated there. An evaporated or
 *    stray loop failing the criteria inside k·R_rms for K consecutive frames → `Main` (event `recapture`).
 *    Labels are per point: every point of a loop carries its loop's label.
 *
 * Cost: O(N) expected per frame for N points (hash tables, lazy hash grid for isolation); buffers grow only when
 * N or the loop count grows; track state is O(loops of the previous frame).
 *
 * References: docs/methods.md §4.2, §4.3, §2.2. Ring speed: R.J. Donnelly, Quantized Vortices in Helium II (CUP, 1991)
 * §5, doi:10.1017/CBO9780511564222; P.G. Saffman, Vortex Dynamics (CUP, 1992) §10.2,
 * doi:10.1017/CBO9780511624063; K.W. Schwarz, Phys. Rev. B 31, 5782 (1985), doi:10.1103/PhysRevB.31.5782.
 *
 * @example
 * ```ts
 * const classifier = createLoopClassifier({ capabilities, controls, classification, coreRadius: 1e-3 });
 * const c = classifier.classify(frame); // one label per filament point
 * ```
 */
import type { EngineEvent, Frame } from "../contract.ts";
import { assertClassificationConfig } from "./_config.ts";
import {
  bucketCount,
  ensureBucketStarts,
  ensureF64,
  ensureI32,
  ensureU8,
  fillBuckets,
  loopSegments,
  loopStarts,
  medianInPlace,
  newCentreResult,
  trimmedCentre,
} from "./_geometry.ts";
import { IdTable } from "./_id_table.ts";
import type { Classification, Classifier, ObservableContext } from "./contract.ts";
import { Label } from "./labels.ts";

/** Euler–Mascheroni constant γ_E. */
const EULER_GAMMA = 0.5772156649015329;

/**
 * Core constant C = 3/4 − γ_E ≈ 0.17278 of the ring speed U = (κ/4πR)[ln(8R/a₀) − C] for the desingularized
 * Biot–Savart law summed over straight segments (docs/methods.md §2.2; docs/check-values.md §3.2, derived and checked there).
 */
export const STRAIGHT_SEGMENT_CORE_CONSTANT = 0.75 - EULER_GAMMA;

/**
 * Translation speed of a thin circular vortex ring, U = (κ/4πR)[ln(8R/a₀) − C].
 *
 * Method: Kelvin–Hicks thin-ring formula; C depends on the core model (1/4 solid core, 1/2 hollow core,
 * 3/4 − γ_E for straight-segment sums, the default here).
 *
 * References: Saffman, Vortex Dynamics (CUP, 1992) §10.2, doi:10.1017/CBO9780511624063; Donnelly, Quantized
 * Vortices in Helium II (CUP, 1991), doi:10.1017/CBO9780511564222.
 *
 * @example
 * ```ts
 * ringSpeed(1e-6, { coreRadius: 1e-10, circulation: 9.9693e-8 }); // ≈ 8.8195e-2 (m/s)
 * ```
 */
export function ringSpeed(
  radius: number,
  options: { coreRadius: number; circulation?: number; coreConstant?: number },
): number {
  return ringSpeedKernel(
    radius,
    options.coreRadius,
    options.circulation ?? 1,
    options.coreConstant ?? STRAIGHT_SEGMENT_CORE_CONSTANT,
  );
}

function ringSpeedKernel(radius: number, a0: number, kappa: number, c: number): number {
  return kappa / (4 * Math.PI * radius) * (Math.log(8 * radius / a0) - c);
}

const NO_EVENTS: readonly EngineEvent[] = Object.freeze([]);

/**
 * Creates the 3D loop classifier. Throws a RangeError when the thresholds are invalid, the engine is not 3D,
 * lacks the `loop` field, or `ctx.coreRadius` (a₀, needed by the ring-speed check) is missing or not > 0.
 *
 * @example
 * ```ts
 * const classifier = createLoopClassifier({ ...ctx, coreRadius: 1e-3 });
 * ```
 */
export function createLoopClassifier(ctx: ObservableContext): Classifier {
  assertClassificationConfig(ctx.classification);
  const caps = ctx.capabilities;
  if (caps.dimension !== 3) {
    throw new RangeError(
      `the loop classifier is for 3D filaments; the engine declares dimension ${caps.dimension}`,
    );
  }
  if (!caps.fields.includes("loop")) {
    throw new RangeError(
      "the loop classifier needs the frame field 'loop', which the engine does not declare",
    );
  }
  const a0 = ctx.coreRadius;
  if (a0 === undefined || !Number.isFinite(a0) || a0 <= 0) {
    throw new RangeError(
      `the loop classifier needs the vortex core radius a₀ > 0 (ObservableContext.coreRadius) for the ` +
        `ring-speed check, got ${String(a0)}`,
    );
  }
  return new LoopClassifier(ctx, a0);
}

/** Per-track state of the loops of one frame (double-buffered: previous and current). */
class Tracks {
  track = new Int32Array(0);
  label = new Uint8Array(0);
  evapStreak = new Int32Array(0);
  strayStreak = new Int32Array(0);
  insideStreak = new Int32Array(0);
  x = new Float64Array(0);
  y = new Float64Array(0);
  z = new Float64Array(0);
  engineLoop = new Int32Array(0);
  markers = new Int32Array(0);
  count = 0;

  ensure(m: number): void {
    if (this.track.length >= m) return;
    const cap = Math.max(m, 2 * this.track.length, 16);
    this.track = new Int32Array(cap);
    this.label = new Uint8Array(cap);
    this.evapStreak = new Int32Array(cap);
    this.strayStreak = new Int32Array(cap);
    this.insideStreak = new Int32Array(cap);
    this.x = new Float64Array(cap);
    this.y = new Float64Array(cap);
    this.z = new Float64Array(cap);
    this.engineLoop = new Int32Array(cap);
    this.markers = new Int32Array(cap);
  }
}

class LoopClassifier implements Classifier {
  readonly #f: number;
  readonly #k: number;
  readonly #sticky: number;
  readonly #cosOut: number;
  readonly #tol: number;
  readonly #a0: number;
  readonly #kappa: number;
  readonly #beta: number;

  #prev = new Tracks();
  #cur = new Tracks();
  readonly #markerPrev = new IdTable(256);
  readonly #loopPrev = new IdTable(64);
  #nextTrack = 0;
  #frameCount = 0;
  #prevT = Number.NaN;
  readonly #centre = newCentreResult();

  // Per-point scratch.
  #len = new Float64Array(0);
  #mx = new Float64Array(0);
  #my = new Float64Array(0);
  #mz = new Float64Array(0);
  #keep = new Uint8Array(0);
  #labels = new Uint8Array(0);
  #starts = new Int32Array(1);
  // Per-loop scratch.
  #loopLen = new Float64Array(0);
  #vx = new Float64Array(0);
  #vy = new Float64Array(0);
  #vz = new Float64Array(0);
  #hasV = new Uint8Array(0);
  #speeds = new Float64Array(0);
  #matchPrev = new Int32Array(0);
  // Per-previous-track scratch.
  #shared = new Int32Array(0);
  #touched = new Int32Array(0);
  #owner = new Int32Array(0);
  #ownerScore = new Float64Array(0);
  // Lazy isolation grid over points.
  #gridBuilt = false;
  #bucketOf = new Int32Array(0);
  #order = new Int32Array(0);
  #bucketStart = new Int32Array(0);
  #gridMask = 0;
  #gridInv = 0;

  constructor(ctx: ObservableContext, a0: number) {
    const c = ctx.classification;
    this.#f = c.separationFactor;
    this.#k = c.radiusFactor;
    this.#sticky = c.stickyFrames;
    this.#cosOut = c.outwardCosine;
    this.#tol = c.speedTolerance;
    this.#a0 = a0;
    this.#kappa = ctx.circulation ?? 1;
    this.#beta = ctx.ringConstant ?? STRAIGHT_SEGMENT_CORE_CONSTANT;
  }

  classify(frame: Frame): Classification {
    const n = frame.n;
    const loop = frame.loop;
    const z = frame.z;
    if (loop === null || z === null) {
      throw new RangeError(`frame ${frame.index} (t = ${frame.t}) lacks the 3D 'loop' or 'z' arrays`);
    }
    const x = frame.x;
    const y = frame.y;
    this.#ensurePoints(n);
    const starts = this.#starts;
    const m = loopStarts(n, loop, starts);
    this.#ensureLoops(m);
    const len = this.#len;
    const mx = this.#mx;
    const my = this.#my;
    const mz = this.#mz;
    loopSegments(m, starts, x, y, z, len, mx, my, mz);

    // 1–2. Loops and their tracks.
    const cur = this.#cur;
    const prev = this.#prev;
    cur.ensure(m);
    cur.count = m;
    this.#matchLoops(frame, m);
    const dt = frame.t - this.#prevT;
    const hasPrev = dt > 0 && this.#frameCount > 0;
    const loopLen = this.#loopLen;
    const hasV = this.#hasV;
    let nSpeeds = 0;
    for (let l = 0; l < m; l++) {
      const a = starts[l];
      const b = starts[l + 1];
      let s = 0, sx = 0, sy = 0, sz = 0, markers = 0;
      for (let i = a; i < b; i++) {
        const w = len[i];
        s += w;
        sx += w * mx[i];
        sy += w * my[i];
        sz += w * mz[i];
        if (frame.marker !== null && frame.marker[i] === 1) markers++;
      }
      loopLen[l] = s;
      cur.x[l] = s > 0 ? sx / s : x[a];
      cur.y[l] = s > 0 ? sy / s : y[a];
      cur.z[l] = s > 0 ? sz / s : z[a];
      cur.engineLoop[l] = loop[a];
      cur.markers[l] = markers;
      const p = this.#matchPrev[l];
      hasV[l] = 0;
      if (p >= 0 && this.#owner[p] === l) {
        cur.track[l] = prev.track[p];
        cur.label[l] = prev.label[p];
        cur.evapStreak[l] = prev.evapStreak[p];
        cur.strayStreak[l] = prev.strayStreak[p];
        cur.insideStreak[l] = prev.insideStreak[p];
        if (hasPrev) {
          this.#vx[l] = (cur.x[l] - prev.x[p]) / dt;
          this.#vy[l] = (cur.y[l] - prev.y[p]) / dt;
          this.#vz[l] = (cur.z[l] - prev.z[p]) / dt;
          hasV[l] = 1;
          this.#speeds[nSpeeds++] = Math.hypot(this.#vx[l], this.#vy[l], this.#vz[l]);
        }
      } else {
        cur.track[l] = this.#nextTrack++;
        cur.label[l] = p >= 0 ? prev.label[p] : Label.Main;
        cur.evapStreak[l] = 0;
        cur.strayStreak[l] = 0;
        cur.insideStreak[l] = 0;
      }
    }

    // 3–4. Main tangle centre, size, spacing.
    const keep = this.#keep;
    for (let l = 0; l < m; l++) {
      const flag = cur.label[l] === Label.Main ? 1 : 0;
      keep.fill(flag, starts[l], starts[l + 1]);
    }
    const centre = trimmedCentre(n, mx, my, mz, len, keep, this.#centre);
    const cx = centre.cx, cy = centre.cy, cz = centre.cz, rms = centre.rms;
    const ballRadius = Math.sqrt(5 / 3) * rms;
    const density = centre.weight / (4 / 3 * Math.PI * ballRadius * ballRadius * ballRadius);
    const spacing = centre.weight > 0 && rms > 0 ? 1 / Math.sqrt(density) : Number.NaN;
    const radiusLimit = this.#k * rms;
    const sizeLimit = this.#f * spacing;
    const median = medianInPlace(this.#speeds, nSpeeds);

    // 6–7. Criteria and sticky transitions per loop.
    const events: EngineEvent[] = [];
    this.#gridBuilt = false;
    const sticky = this.#sticky;
    const circ = frame.circulation;
    for (let l = 0; l < m; l++) {
      const a = starts[l];
      const b = starts[l + 1];
      const rx = cur.x[l] - cx;
      const ry = cur.y[l] - cy;
      const rz = cur.z[l] - cz;
      const distance = Math.sqrt(rx * rx + ry * ry + rz * rz);
      const outside = distance > radiusLimit;
      let ok = false;
      let minDistance = Number.NaN;
      let speed = Number.NaN, expected = Number.NaN, outwardCosine = Number.NaN;
      const rEff = loopLen[l] / (2 * Math.PI);
      if (hasV[l] === 1 && rEff > 0 && rEff < sizeLimit) {
        const vx = this.#vx[l], vy = this.#vy[l], vz = this.#vz[l];
        speed = Math.sqrt(vx * vx + vy * vy + vz * vz);
        let kappa = this.#kappa;
        if (circ !== null) {
          let s = 0;
          for (let i = a; i < b; i++) s += Math.abs(circ[i]);
          kappa = s / (b - a);
        }
        expected = ringSpeedKernel(rEff, this.#a0, kappa, this.#beta);
        outwardCosine = speed > 0 && distance > 0
          ? (vx * rx + vy * ry + vz * rz) / (speed * distance)
          : Number.NaN;
        const fast = speed > 2 * median && expected > 0 && speed * (1 + this.#tol) >= expected &&
          speed <= expected * (1 + this.#tol);
        if (fast && outwardCosine > this.#cosOut) {
          if (outside) ok = true;
          else {
            minDistance = this.#distanceToOtherLoops(frame, a, b, spacing);
            ok = minDistance > spacing;
          }
        }
      }
      const label = cur.label[l];
      if (ok) {
        cur.evapStreak[l]++;
        cur.strayStreak[l] = 0;
        cur.insideStreak[l] = 0;
        if (label !== Label.Evaporated && cur.evapStreak[l] >= sticky) {
          cur.label[l] = Label.Evaporated;
          events.push({
            t: frame.t,
            kind: "evaporation",
            ids: this.#markerIds(frame, a, b),
            data: {
              track: cur.track[l],
              loop: cur.engineLoop[l],
              length: loopLen[l],
              effectiveRadius: rEff,
              spacing,
              sizeLimit,
              speed,
              medianSpeed: median,
              ringSpeed: expected,
              speedRatio: speed / expected,
              outwardCosine,
              distance,
              radiusLimit,
              minDistance,
              rmsRadius: rms,
              centreX: cx,
              centreY: cy,
              centreZ: cz,
              x: cur.x[l],
              y: cur.y[l],
              z: cur.z[l],
              frames: cur.evapStreak[l],
              fromLabel: label,
            },
          });
        }
      } else {
        cur.evapStreak[l] = 0;
        cur.strayStreak[l] = outside ? cur.strayStreak[l] + 1 : 0;
        cur.insideStreak[l] = distance <= radiusLimit ? cur.insideStreak[l] + 1 : 0;
        const becomesStray = label === Label.Main && cur.strayStreak[l] >= sticky;
        const recaptured = !becomesStray && label !== Label.Main && cur.insideStreak[l] >= sticky;
        if (becomesStray || recaptured) {
          cur.label[l] = becomesStray ? Label.Stray : Label.Main;
          if (recaptured) cur.strayStreak[l] = 0;
          events.push({
            t: frame.t,
            kind: becomesStray ? "stray" : "recapture",
            ids: this.#markerIds(frame, a, b),
            data: {
              track: cur.track[l],
              loop: cur.engineLoop[l],
              length: loopLen[l],
              distance,
              radiusLimit,
              rmsRadius: rms,
              centreX: cx,
              centreY: cy,
              centreZ: cz,
              frames: sticky,
              fromLabel: label,
            },
          });
        }
      }
    }

    // Labels per point; this frame's loops become the previous tracks.
    const labels = this.#labels;
    for (let l = 0; l < m; l++) labels.fill(cur.label[l], starts[l], starts[l + 1]);
    this.#rememberMarkers(frame, m);
    this.#prev = cur;
    this.#cur = prev;
    this.#prevT = frame.t;
    this.#frameCount++;
    return { labels, centre: [cx, cy, cz], rmsRadius: rms, events: events.length === 0 ? NO_EVENTS : events };
  }

  /** matchPrev[l] = previous track claimed by loop l (or -1); owner[p] = the loop that keeps track p. */
  #matchLoops(frame: Frame, m: number): void {
    const prevCount = this.#prev.count;
    this.#ensurePrev(prevCount);
    const shared = this.#shared;
    const touched = this.#touched;
    const owner = this.#owner;
    const ownerScore = this.#ownerScore;
    owner.fill(-1, 0, prevCount);
    ownerScore.fill(0, 0, prevCount);
    const marker = frame.marker;
    const id = frame.id;
    const starts = this.#starts;
    for (let l = 0; l < m; l++) {
      const a = starts[l];
      const b = starts[l + 1];
      let nTouched = 0;
      let nMarkers = 0;
      if (marker !== null && prevCount > 0) {
        for (let i = a; i < b; i++) {
          if (marker[i] !== 1) continue;
          nMarkers++;
          const p = this.#markerPrev.get(id[i]);
          if (p < 0) continue;
          if (shared[p] === 0) touched[nTouched++] = p;
          shared[p]++;
        }
      }
      let best = -1;
      let score = 0;
      for (let q = 0; q < nTouched; q++) {
        const p = touched[q];
        if (shared[p] > score || (shared[p] === score && p < best)) {
          best = p;
          score = shared[p];
        }
        shared[p] = 0;
      }
      if (best < 0 && nMarkers === 0 && prevCount > 0) {
        const p = this.#loopPrev.get(frame.loop![a]);
        if (p >= 0) {
          best = p;
          score = 0.5; // weaker than any marker claim
        }
      }
      this.#matchPrev[l] = best;
      if (best >= 0 && score > ownerScore[best]) {
        ownerScore[best] = score;
        owner[best] = l;
      }
    }
  }

  #rememberMarkers(frame: Frame, m: number): void {
    this.#markerPrev.clear();
    this.#loopPrev.clear();
    const marker = frame.marker;
    const id = frame.id;
    const starts = this.#starts;
    for (let l = 0; l < m; l++) {
      const a = starts[l];
      const b = starts[l + 1];
      if (this.#cur.markers[l] === 0) {
        this.#loopPrev.set(frame.loop![a], l);
        continue;
      }
      for (let i = a; i < b; i++) if (marker![i] === 1) this.#markerPrev.set(id[i], l);
    }
  }

  #markerIds(frame: Frame, a: number, b: number): number[] {
    const ids: number[] = [];
    const marker = frame.marker;
    if (marker === null) return ids;
    for (let i = a; i < b; i++) if (marker[i] === 1) ids.push(frame.id[i]);
    return ids;
  }

  /**
   * Smallest distance from a point of loop [a, b) to a point of another loop, if below `radius`; else +∞.
   * Builds (once per frame) a hash grid of all points with cell size `radius`.
   */
  #distanceToOtherLoops(frame: Frame, a: number, b: number, radius: number): number {
    if (!(radius > 0) || !Number.isFinite(radius)) return Number.NaN;
    const n = frame.n;
    const x = frame.x, y = frame.y, z = frame.z!;
    const bucketOf = this.#bucketOf;
    const order = this.#order;
    const start = this.#bucketStart;
    if (!this.#gridBuilt) {
      const nb = bucketCount(n);
      this.#gridMask = nb - 1;
      this.#gridInv = 1 / radius;
      const inv = this.#gridInv;
      start.fill(0, 0, nb + 1);
      for (let i = 0; i < n; i++) {
        const gx = Math.floor(x[i] * inv), gy = Math.floor(y[i] * inv), gz = Math.floor(z[i] * inv);
        if (!Number.isFinite(gx) || !Number.isFinite(gy) || !Number.isFinite(gz)) {
          bucketOf[i] = -1;
          continue;
        }
        const bk = cellHash3(gx, gy, gz) & this.#gridMask;
        bucketOf[i] = bk;
        start[bk + 1]++;
      }
      fillBuckets(n, nb, bucketOf, start, order);
      this.#gridBuilt = true;
    }
    const inv = this.#gridInv;
    const mask = this.#gridMask;
    let best2 = radius * radius;
    let found = false;
    for (let i = a; i < b; i++) {
      const gx = Math.floor(x[i] * inv), gy = Math.floor(y[i] * inv), gz = Math.floor(z[i] * inv);
      if (bucketOf[i] < 0) continue;
      for (let ox = -1; ox <= 1; ox++) {
        for (let oy = -1; oy <= 1; oy++) {
          for (let oz = -1; oz <= 1; oz++) {
            const bk = cellHash3(gx + ox, gy + oy, gz + oz) & mask;
            const end = start[bk + 1];
            for (let p = start[bk]; p < end; p++) {
              const j = order[p];
              if (j >= a && j < b) continue;
              const dx = x[j] - x[i], dy = y[j] - y[i], dz = z[j] - z[i];
              const d2 = dx * dx + dy * dy + dz * dz;
              if (d2 < best2) {
                best2 = d2;
                found = true;
              }
            }
          }
        }
      }
    }
    return found ? Math.sqrt(best2) : Number.POSITIVE_INFINITY;
  }

  #ensurePoints(n: number): void {
    if (this.#len.length >= n && this.#bucketStart.length > 0) return;
    this.#len = ensureF64(this.#len, n);
    this.#mx = ensureF64(this.#mx, n);
    this.#my = ensureF64(this.#my, n);
    this.#mz = ensureF64(this.#mz, n);
    this.#keep = ensureU8(this.#keep, n);
    this.#labels = ensureU8(this.#labels, n);
    this.#starts = ensureI32(this.#starts, n + 1);
    this.#bucketOf = ensureI32(this.#bucketOf, n);
    this.#order = ensureI32(this.#order, n);
    this.#bucketStart = ensureBucketStarts(this.#bucketStart, this.#len.length);
  }

  #ensureLoops(m: number): void {
    this.#loopLen = ensureF64(this.#loopLen, m);
    this.#vx = ensureF64(this.#vx, m);
    this.#vy = ensureF64(this.#vy, m);
    this.#vz = ensureF64(this.#vz, m);
    this.#hasV = ensureU8(this.#hasV, m);
    this.#speeds = ensureF64(this.#speeds, m);
    this.#matchPrev = ensureI32(this.#matchPrev, m);
  }

  #ensurePrev(p: number): void {
    if (this.#shared.length >= p) return;
    const cap = Math.max(p, 2 * this.#shared.length);
    this.#shared = new Int32Array(cap);
    this.#touched = new Int32Array(cap);
    this.#owner = new Int32Array(cap);
    this.#ownerScore = new Float64Array(cap);
  }
}

/** Hash of integer 3D cell coordinates (wrapped to 32 bits consistently for neighbours). */
function cellHash3(gx: number, gy: number, gz: number): number {
  return (Math.imul(gx | 0, 0x8da6b343) ^ Math.imul(gy | 0, 0xd8163841) ^ Math.imul(gz | 0, 0xcb1ab31f)) >>>
    0;
}
