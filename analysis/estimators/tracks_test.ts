import assert from "node:assert/strict";
import { assertClose } from "./_check.ts";
import { prepareTracks, type RealisationTracks } from "./tracks.ts";

/** Three objects on a line over four frames; object 2 vanishes after frame 1, object 1 leaves the cluster at 3. */
function hand(): RealisationTracks {
  const NaN_ = Number.NaN;
  // x at frames 0..3 for objects 0, 1, 2 (frame-major).
  const x = Float64Array.of(0, 10, 20, 1, 12, 21, 2, 14, NaN_, 3, 16, NaN_);
  const main = Uint8Array.of(1, 1, 1, 1, 1, 1, 1, 1, 0, 1, 0, 0);
  return { objects: 3, x, y: new Float64Array(12), z: null, main, group: null };
}

Deno.test("prepareTracks: origin, lag and cohort sums of a hand-made realisation (pairwise relative displacements)", () => {
  // Displacements from t₀: object 0: 0, 1, 2, 3; object 1: 0, 2, 4, (not main at 3); object 2: 0, 1, gone.
  // Pair sums A = Σ|a − ā|² and W = N − 1 (identity Σ_{i<j}|a_i − a_j|² = NΣ|a − ā|²; elementary).
  const p = prepareTracks({ dimension: 2, t: [0, 1, 2, 3], realisations: [hand()] });
  const o = p.origin[0];
  // Frame 1: a = (1, 2, 1), mean 4/3: Σ(a − ā)² = 1/9 + 4/9 + 1/9 = 2/3, W = 2.
  assertClose(o.A[1], 2 / 3, { rel: 1e-12 }, "A at frame 1");
  assert.equal(o.W[1], 2);
  // Frame 2: object 2 censored: a = (2, 4): Σ(a − ā)² = 2, W = 1 → per-object MSD 2 = |4 − 2|²/2.
  assertClose(o.A[2], 2, { rel: 1e-12 }, "A at frame 2");
  assert.equal(o.W[2], 1);
  // Frame 3: object 1 no longer main, one object left: no pair.
  assert.equal(o.W[3], 0);
  // Lag 1 from frame 1 to 2: objects 0 and 1 (main at both ends): a = (1, 2) → A = 0.5, W = 1.
  const L = p.lags.length;
  assert.deepEqual(Array.from(p.lags), [1, 2, 3]);
  assertClose(p.lag[0].A[1 * L + 0], 0.5, { rel: 1e-12 }, "lag 1 from frame 1");
  // Cohort of [0, 2]: objects main at frames 0, 1, 2: objects 0 and 1; displacements from frame 0.
  const c = p.cohort(0, 2)[0];
  assert.equal(c.n, 2);
  assert.equal(c.nStart, 3);
  assert.equal(c.nBoth, 2);
  assert.equal(c.W, 1);
  assertClose(c.A[2], 2, { rel: 1e-12 }, "cohort A at frame 2");
  // Spread of the cohort at frame 2: positions 2 and 14 → Σ(r − r̄)² = 72.
  assertClose(c.RA[2], 72, { rel: 1e-12 }, "cohort spread at frame 2");
  assert.equal(p.cohort(0, 2), p.cohort(0, 2), "cached per window");
});

Deno.test("prepareTracks: no lag estimator when frames are not equally spaced", () => {
  const p = prepareTracks({ dimension: 2, t: [0, 1, 3, 4], realisations: [hand()] });
  assert.equal(p.lags.length, 0);
  assert.match(p.lagProblem!, /not equally spaced/);
});
