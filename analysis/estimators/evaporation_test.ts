import assert from "node:assert/strict";
import { assertClose } from "./_check.ts";
import { evaporationSummary, halfTime } from "./evaporation.ts";
import { streamFromSeed } from "./seed.ts";

// Cumulative evaporation N(t) = N∞(1 − e^{−t/τ}): half of N(T) is reached at t½ = −τ ln(1 − (1 − e^{−T/τ})/2)
// (analytic; for T ≫ τ this is τ ln 2).
const tau = 0.7;
const T = 10;
const times = Array.from({ length: 10001 }, (_, k) => (k * T) / 10000);
const curve = (nInf: number) => times.map((t) => nInf * (1 - Math.exp(-t / tau)));
const exactHalf = -tau * Math.log(1 - (1 - Math.exp(-T / tau)) / 2);

Deno.test("halfTime of an exponential approach matches the analytic t½", () => {
  // Linear interpolation on Δt = 1e-3: error ≤ Δt²·max|N''|/(8 N') ≈ 1e-7 relative (interpolation bound).
  assertClose(halfTime(times, curve(12)), exactHalf, { rel: 1e-6 }, "t½");
  assert.ok(Number.isNaN(halfTime(times, times.map(() => 0))), "nothing evaporates: t½ undefined");
});

Deno.test("evaporationSummary: identical realisations give exact values and zero-width intervals", () => {
  const rows = Array.from({ length: 6 }, () => curve(20));
  const e = evaporationSummary({ t: times, evaporated: rows }, { seed: "same", replicates: 200 });
  const nEnd = 20 * (1 - Math.exp(-T / tau));
  assertClose(e.evaporated.value!, nEnd, { rel: 1e-14 }, "N_ev(t_end)");
  assertClose(e.tHalf.value!, exactHalf, { rel: 1e-6 }, "t½");
  assertClose(e.rate.value!, nEnd / (2 * exactHalf), { rel: 1e-6 }, "rate = N/(2t½)");
  // Every resample is the same ensemble: the interval collapses onto the value.
  assert.ok(e.evaporated.interval !== null);
  assertClose(e.evaporated.interval.lower, nEnd, { rel: 1e-14 }, "lower");
  assertClose(e.evaporated.interval.upper, nEnd, { rel: 1e-14 }, "upper");
  assert.equal(e.lostFraction, null);
});

Deno.test("evaporationSummary: amplitudes vary, t½ does not; the interval holds the ensemble mean", () => {
  const rng = streamFromSeed("amplitudes");
  const amps = Array.from({ length: 30 }, () => 5 + 30 * rng.uniform());
  const e = evaporationSummary({ t: times, evaporated: amps.map(curve) }, { seed: "b", replicates: 500 });
  const mean = amps.reduce((s, a) => s + a, 0) / amps.length * (1 - Math.exp(-T / tau));
  assertClose(e.evaporated.value!, mean, { rel: 1e-12 }, "mean of the finals");
  const ci = e.evaporated.interval!;
  assert.ok(ci.lower < mean && mean < ci.upper, `[${ci.lower}, ${ci.upper}] ∋ ${mean}`);
  // A mean of curves with one shape has that shape: t½ is amplitude-free (exact up to interpolation).
  assertClose(e.tHalf.value!, exactHalf, { rel: 1e-6 }, "t½");
  assertClose(e.tHalf.interval!.lower, exactHalf, { rel: 1e-6 }, "t½ interval lower");
  assertClose(e.tHalf.interval!.upper, exactHalf, { rel: 1e-6 }, "t½ interval upper");
});

Deno.test("evaporationSummary: no evaporation gives 0, no t½, rate 0; lost fraction is a ratio of sums", () => {
  const zero = [times.map(() => 0), times.map(() => 0)];
  const amount = [times.map((t) => 100 - 6 * t), times.map((t) => 50 - 2.5 * t)];
  const e = evaporationSummary({ t: times, evaporated: zero, amount }, { seed: "z", replicates: 100 });
  assert.equal(e.evaporated.value, 0);
  assert.equal(e.tHalf.value, null);
  assert.equal(e.rate.value, 0);
  // 1 − (40 + 25)/(100 + 50) (arithmetic).
  assertClose(e.lostFraction!.value!, 1 - 65 / 150, { rel: 1e-14 }, "lost fraction");
});

Deno.test("evaporationSummary refuses series of the wrong length and empty ensembles", () => {
  assert.throws(() => evaporationSummary({ t: [0, 1], evaporated: [[0]] }, { seed: "x" }), RangeError);
  assert.throws(() => evaporationSummary({ t: [0, 1], evaporated: [] }, { seed: "x" }), RangeError);
});
