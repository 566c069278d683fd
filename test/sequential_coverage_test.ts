/**
 * Sequential sampling ("run until precise enough") on a synthetic engine with a known answer: Stein's
 * two-stage procedure (C. Stein, Ann. Math. Statist. 16, 243 (1945), doi:10.1214/aoms/1177731088) must cover
 * the true mean in at least 93 % of 400 repeated studies at the nominal 95 %, and the total number of
 * realisations it asks for must follow the distribution the procedure implies (N = max(n₀, ⌈c·s₁²⌉) with
 * (n₀ − 1)s₁²/σ² ~ χ²_{n₀−1}). For contrast the naive rule "stop as soon as the running interval is narrower
 * than the target" is measured on the same streams and printed (it under-covers).
 */
import { SYNTHETIC_ENGINE, type SyntheticParams } from "./_synthetic_engine.ts";
import { RandomStream } from "../engines/random.ts";
import type { FrameSink } from "../engines/contract.ts";
import { deriveSeedState } from "../study/seeds.ts";
import {
  chiSquareCdf,
  chiSquareQuantile,
  meanAndSd,
  steinInterval,
  steinSampleSize,
  studentTQuantile,
} from "../analysis/estimators/mod.ts";
import { assert } from "./_assert.ts";

const SINK: FrameSink = { frame() {}, event() {} };
const PARAMS_HASH = "5e1f"; // any hex: the synthetic point's identity in the seed derivation

const CONTROLS = { duration: 1, sampleInterval: 1, tolerance: 1e-9, maxDistance: 1e6 };

/** Realisation `i` of repetition `rep`: the engine's scalar, from the seed the runner would derive. */
function realisation(params: SyntheticParams, rep: number, i: number): number {
  const rng = RandomStream.fromState(deriveSeedState(`coverage-${rep}`, PARAMS_HASH, i));
  const out = SYNTHETIC_ENGINE.run({ params, controls: CONTROLS, rng }, SINK) as {
    scalars: { value: number };
  };
  return out.scalars.value;
}

interface Outcome {
  readonly covered: number;
  readonly totals: number[];
  readonly naiveCovered: number;
  readonly meanWidthRatio: number;
}

function repeat(params: SyntheticParams, n0: number, h: number, reps: number): Outcome {
  let covered = 0, naiveCovered = 0, widthRatio = 0;
  const totals: number[] = [];
  for (let rep = 0; rep < reps; rep++) {
    const values: number[] = [];
    for (let i = 0; i < n0; i++) values.push(realisation(params, rep, i));
    const plan = steinSampleSize({ n: n0, sd: meanAndSd(values).sd }, { halfWidth: h });
    for (let i = n0; i < plan.total; i++) values.push(realisation(params, rep, i));
    const ci = steinInterval(plan, meanAndSd(values).mean, plan.total);
    if (ci.lower <= params.mean && params.mean <= ci.upper) covered++;
    widthRatio += ci.halfWidth / h;
    totals.push(plan.total);
    // Naive rule on the same stream: stop at the first n ≥ n₀ whose t interval is narrower than h.
    const naive: number[] = [];
    for (let i = 0;; i++) {
      naive.push(i < values.length ? values[i] : realisation(params, rep, i));
      if (naive.length < n0) continue;
      const m = meanAndSd(naive);
      const hw = studentTQuantile(0.975, m.n - 1) * m.sd / Math.sqrt(m.n);
      if (hw <= h || naive.length >= 5000) {
        if (Math.abs(m.mean - params.mean) <= hw) naiveCovered++;
        break;
      }
    }
  }
  return { covered, totals, naiveCovered, meanWidthRatio: widthRatio / reps };
}

Deno.test("Stein two-stage sampling: ≥ 93 % coverage in 400 studies, N distributed as the procedure implies", () => {
  const params: SyntheticParams = { mean: 5, sd: 2, law: "normal" };
  const n0 = 10, h = 0.5, reps = 400;
  const out = repeat(params, n0, h, reps);
  const coverage = out.covered / reps;
  console.log(
    `Stein: coverage ${(100 * coverage).toFixed(1)} % (nominal 95 %), mean half-width ${
      out.meanWidthRatio.toFixed(3)
    } × target; naive "stop when narrow": ${(100 * out.naiveCovered / reps).toFixed(1)} %`,
  );
  assert(coverage >= 0.93, `coverage ${coverage} < 0.93 over ${reps} repetitions`);
  // Expected N: c = (t/h)², s₁² = σ²X/(n₀ − 1), X ~ χ²_{n₀−1}; E[N] = n₀ + Σ_{m ≥ n₀} P(c s₁² > m).
  const t = studentTQuantile(0.975, n0 - 1);
  const scale = (t / h) ** 2 * params.sd ** 2 / (n0 - 1);
  let expected = n0;
  for (let m = n0; m < 100_000; m++) {
    const tail = 1 - chiSquareCdf(m / scale, n0 - 1);
    expected += tail;
    if (tail < 1e-12) break;
  }
  const mean = out.totals.reduce((a, b) => a + b, 0) / reps;
  const sd = Math.sqrt(out.totals.reduce((a, b) => a + (b - mean) ** 2, 0) / (reps - 1));
  console.log(`N: mean ${mean.toFixed(1)} (expected ${expected.toFixed(1)}), sd ${sd.toFixed(1)}`);
  assert(
    Math.abs(mean - expected) <= 3.5 * sd / Math.sqrt(reps),
    `mean N ${mean} differs from the expected ${expected} by more than 3.5 standard errors`,
  );
  const lo = Math.max(n0, Math.ceil(scale * chiSquareQuantile(0.005, n0 - 1)));
  const hi = Math.ceil(scale * chiSquareQuantile(0.995, n0 - 1));
  const inside = out.totals.filter((N) => N >= lo && N <= hi).length / reps;
  assert(inside >= 0.97, `only ${inside} of the totals lie in the 99 % range [${lo}, ${hi}]`);
});

Deno.test("Stein two-stage sampling on skewed (exponential) values: coverage measured, not assumed", () => {
  // The procedure is exact for normal values only. On a skewed law the first-stage spread and mean are
  // correlated (a stage without a large value has both low), so it under-covers: measured ≈ 89 % for n₀ = 10
  // and 20 at nominal 95 % (the caveat stated in docs/methods.md). The test pins that measurement to a band.
  for (const n0 of [10, 20]) {
    const out = repeat({ mean: 2, sd: 2, law: "exponential" }, n0, 0.4, 400);
    const coverage = out.covered / 400;
    console.log(
      `Stein on exponential values, n₀ = ${n0}: coverage ${(100 * coverage).toFixed(1)} %; naive: ${
        (100 * out.naiveCovered / 400).toFixed(1)
      } %`,
    );
    assert(coverage >= 0.85 && coverage <= 0.95, `coverage ${coverage} on exponential values, n₀ = ${n0}`);
  }
});
