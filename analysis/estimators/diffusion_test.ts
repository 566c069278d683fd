import assert from "node:assert/strict";
import { assertClose, assertWithin } from "./_check.ts";
import { diffusionEvidence } from "./diffusion.ts";
import { streamFromSeed } from "./seed.ts";
import {
  asRealisationTracks,
  brownianTracks,
  censoredMixtureTracks,
  ornsteinUhlenbeckTracks,
  walkerTrackEnsemble,
} from "./synthetic.ts";
import { prepareTracks, type RealisationTracks, type TrackEnsemble } from "./tracks.ts";

const LONG = Deno.env.get("SPINDRIFT_LONG") === "1";

/** Frames 0, h, 2h, … up to tEnd. */
function uniformTimes(tEnd: number, h: number): Float64Array {
  return Float64Array.from({ length: Math.round(tEnd / h) + 1 }, (_, k) => h * k);
}

Deno.test("pairwise estimator: 10 independent Brownian walkers per realisation give D within 1 %; centroid removal alone is (1 − 1/N) low", () => {
  // Brownian motion: ⟨|Δr|²⟩ = 2dDt (Einstein, Ann. Phys. 17, 549 (1905)). Removing the centroid of N
  // independent walkers scales the mean by (1 − 1/N) (variance of x_i − x̄: elementary statistics); the
  // pairwise form C/(2P) is unbiased. 40 000 realisations × 10 walkers at t = 1: relative standard error
  // 1/√(40 000 · 9) ≈ 0.17 %, so 1 % is six standard errors.
  const D = 0.5, N = 10, R = 40_000;
  const times = [0, 0.5, 1];
  const ens = walkerTrackEnsemble({ kind: "brownian", dimension: 2, walkers: N, D, times }, {
    realisations: R,
    seed: "pairwise-ten",
  });
  const p = prepareTracks(ens);
  let A = 0, W = 0, naive = 0, objects = 0;
  for (const c of p.origin) {
    A += c.A[2];
    W += c.W[2];
    naive += c.A[2]; // Σ|a − ā|² for singletons
    objects += N;
  }
  const pairwise = A / W / (2 * 2 * 1);
  const centroid = naive / objects / (2 * 2 * 1);
  console.log(
    `pairwise D = ${pairwise}, centroid-removed D = ${centroid}, expected ${D} and ${D * (1 - 1 / N)}`,
  );
  assertClose(pairwise, D, { rel: 0.01 }, "pairwise D");
  assertClose(centroid, D * (1 - 1 / N), { rel: 0.01 }, "centroid-removed MSD is low by (1 − 1/N)");
});

/** `loops` rigid rings of `markers` markers each: every loop translates as one Brownian walker (3D). */
function rigidLoops(
  seed: string,
  loops: number,
  markers: number,
  D: number,
  times: readonly number[],
): RealisationTracks {
  const rng = streamFromSeed(seed);
  const centres = brownianTracks(rng, { dimension: 3, walkers: loops, D, times });
  const M = loops * markers, K = times.length;
  const x = new Float64Array(K * M), y = new Float64Array(K * M), z = new Float64Array(K * M);
  const group = new Int32Array(K * M);
  const offsets = Array.from({ length: M }, () => [rng.normal(), rng.normal(), rng.normal()]);
  for (let k = 0; k < K; k++) {
    for (let g = 0; g < loops; g++) {
      for (let m = 0; m < markers; m++) {
        const j = g * markers + m, q = k * M + j;
        x[q] = centres.x[k * loops + g] + offsets[j][0];
        y[q] = centres.y[k * loops + g] + offsets[j][1];
        z[q] = centres.z![k * loops + g] + offsets[j][2];
        group[q] = 100 + g; // loop ids need not be dense
      }
    }
  }
  return { objects: M, x, y, z, main: new Uint8Array(K * M).fill(1), group };
}

Deno.test("pairwise estimator: markers of rigid loops count once per loop (N_eff = loops); as independent markers D is biased", () => {
  // Markers on one rigid ring move together, so only pairs on different loops carry information; ignoring the
  // grouping divides by pairs that are never independent: the estimate falls by (1 − 1/G)/(1 − 1/M) for G
  // loops of M/G markers (derived in tracks.ts from the pair counts). Brownian loops: MSD = 6Dt (Einstein 1905).
  const D = 0.3, G = 4, m = 5, R = 20_000;
  const times = [0, 0.5, 1];
  const real = Array.from({ length: R }, (_, i) => rigidLoops(`rigid/${i}`, G, m, D, times));
  const grouped = prepareTracks({ dimension: 3, t: times, realisations: real });
  const single = prepareTracks({
    dimension: 3,
    t: times,
    realisations: real.map((r) => ({ ...r, group: null })),
  });
  const estimate = (p: typeof grouped) => {
    let A = 0, W = 0;
    for (const c of p.origin) {
      A += c.A[2];
      W += c.W[2];
    }
    return A / W / (2 * 3 * 1);
  };
  const g = estimate(grouped), s = estimate(single);
  const bias = (1 - 1 / G) / (1 - 1 / (G * m));
  console.log(`grouped D = ${g}, markers as independent: ${s} (expected ${D} and ${D * bias})`);
  // 20 000 × 4 loops: relative standard error ≈ √(2/(3·60 000)) ≈ 0.33 %.
  assertClose(g, D, { rel: 0.015 }, "D with N_eff = loops");
  assertClose(s, D * bias, { rel: 0.015 }, "markers treated as independent objects");
});

Deno.test("diffusionEvidence: clean Ornstein–Uhlenbeck walkers are diffusive by all three estimators; the interval holds D", () => {
  // OU walkers: ⟨Δx²⟩ = 2D[t − τ(1 − e^{−t/τ})] (Uhlenbeck & Ornstein, Phys. Rev. 36, 823 (1930)).
  const ens = walkerTrackEnsemble(
    {
      kind: "ornstein-uhlenbeck",
      dimension: 2,
      walkers: 20,
      D: 0.25,
      tau: 0.1,
      times: uniformTimes(15, 0.1),
    },
    { realisations: 24, seed: "ou-clean" },
  );
  const ev = diffusionEvidence(prepareTracks(ens), { seed: "ou-clean/b", replicates: 1000 });
  assert.equal(ev.status, "ok", ev.reasons.join("; "));
  for (const k of ["origin", "cohort", "lag"] as const) {
    const e = ev.estimators[k]!;
    assert.ok(e.exponent.pass, `${k}: ${e.exponent.reason}`);
    assertWithin(0.25, e.ci!.bca!.lower, e.ci!.bca!.upper, `${k}: true D in the BCa interval`);
  }
  assertWithin(0.25, ev.answer!.lower!, ev.answer!.upper!, "the answer's interval");
  assert.ok(ev.support!.fraction > 0.5, `support ${ev.support!.fraction}`);
  // The same evidence from the same seed, and from a subset equal to an ensemble of that subset.
  const again = diffusionEvidence(prepareTracks(ens), { seed: "ou-clean/b", replicates: 1000 });
  assert.deepEqual([again.answer, again.support], [ev.answer, ev.support]);
  const subset = [0, 3, 5, 6, 9, 10, 11, 15, 20, 23];
  const viaSubset = diffusionEvidence(prepareTracks(ens), {
    seed: "s",
    replicates: 200,
    realisations: subset,
  });
  const rebuilt: TrackEnsemble = { ...ens, realisations: subset.map((i) => ens.realisations[i]) };
  const viaEnsemble = diffusionEvidence(prepareTracks(rebuilt), { seed: "s", replicates: 200 });
  assert.deepEqual(
    [viaSubset.status, viaSubset.window, viaSubset.estimators.cohort?.D, viaSubset.answer],
    [viaEnsemble.status, viaEnsemble.window, viaEnsemble.estimators.cohort?.D, viaEnsemble.answer],
  );
});

Deno.test("diffusionEvidence: half Brownian walkers and half ballistic movers removed at a constant rate → no diffusive regime", () => {
  // Brownian half: MSD = 4Dt, D = 0.2 (Einstein 1905); ballistic half: MSD = ⟨v²⟩t², each removed with a
  // constant hazard 0.1 per unit time (exponential lifetimes, independent of position). The survivors are a
  // mixture that is not diffusive while ballistic movers remain; the cohort and lag estimators see them.
  const times = uniformTimes(12, 0.1);
  const real = Array.from({ length: 64 }, (_, i) =>
    censoredMixtureTracks(streamFromSeed(`rate/${i}`), {
      dimension: 2,
      times,
      diffusers: 20,
      D: 0.2,
      ballistic: 20,
      removal: { kind: "rate", rate: 0.1, speedSpread: 0.3 },
      initialSpread: 1,
    }));
  const ev = diffusionEvidence(prepareTracks({ dimension: 2, t: times, realisations: real }), {
    seed: "rate/b",
    replicates: 400,
  });
  console.log(ev.reasons);
  assert.equal(ev.status, "no-diffusive-regime");
  assert.equal(ev.answer, null);
  assert.ok(ev.reasons.some((r) => /faster/.test(r)), ev.reasons.join("; "));
  const lag = ev.estimators.lag!;
  assert.ok(lag.exponent.interval!.lower > 1, `lag exponent ${lag.exponent.value} above 1 beyond its noise`);
});

Deno.test("diffusionEvidence: ballistic movers censored at the diffusive front make the survivor average exactly 2dDt; the answer stays near the diffusers' D", () => {
  // Built to fool survivor averages: ballistic movers leave when their displacement reaches c√t (c² = 3·2dD,
  // speeds uniform), so survivors have E[v²t²] = 2dDt exactly (derived in synthetic.ts) and the average from
  // t₀ is as linear as pure diffusion with the diffusers' D = 0.2 (Einstein 1905).
  const times = uniformTimes(12, 0.1);
  const mixture = (R: number, seed: string) =>
    Array.from({ length: R }, (_, i) =>
      censoredMixtureTracks(streamFromSeed(`${seed}/${i}`), {
        dimension: 2,
        times,
        diffusers: 20,
        D: 0.2,
        ballistic: 20,
        removal: { kind: "front", maxSpeed: 3 },
        initialSpread: 1,
      }));
  const big = prepareTracks({ dimension: 2, t: times, realisations: mixture(200, "front-curve") });
  for (const k of [10, 30, 60]) {
    let A = 0, W = 0;
    for (const c of big.origin) {
      A += c.A[k];
      W += c.W[k];
    }
    // 200 × 40 objects: relative standard error ≈ 1–1.5 % (heavy tail of the survivors' v²t²).
    assertClose(A / W / (4 * times[k]), 0.2, { rel: 0.05 }, `survivor-average MSD/(4t) at t = ${times[k]}`);
  }
  // Only slow ballistic movers stay through a window, so the fixed cohort and the lag increments are nearly
  // diffusive: the rule may declare a regime here (a limit of any exponent test: a contamination that bends the
  // exponent by less than the band's half-width passes); the number it then gives stays within 10 % of 0.2.
  const ev = diffusionEvidence(
    prepareTracks({ dimension: 2, t: times, realisations: mixture(64, "front") }),
    {
      seed: "front/b",
      replicates: 400,
    },
  );
  console.log(ev.status, ev.reasons, ev.answer);
  if (ev.answer) assertClose(ev.answer.D, 0.2, { rel: 0.1 }, "cohort D against the diffusers' D");
});

Deno.test("diffusionEvidence: when the main cluster halves before a window fits, lag increments still measure D (loss-limited)", () => {
  // OU walkers (D = 0.25, τ = 0.3; Uhlenbeck & Ornstein 1930) each removed at rate 0.1 (position-independent):
  // N_main halves ~7 time units after t₁ ≈ 6, so t₂/t₁ < 5 and there is no window; increments over lags
  // beyond 3τ_c of walkers present at both ends are still diffusive with D.
  const times = uniformTimes(30, 0.2);
  const K = times.length;
  const real = Array.from({ length: 40 }, (_, i) => {
    const rng = streamFromSeed(`loss/${i}`);
    const tr = asRealisationTracks(
      ornsteinUhlenbeckTracks(rng, { dimension: 2, walkers: 40, D: 0.25, tau: 0.3, times, initialSpread: 1 }),
    );
    for (let j = 0; j < tr.objects; j++) {
      const end = -Math.log(1 - rng.uniform()) / 0.1;
      for (let k = 0; k < K; k++) {
        if (times[k] >= end) {
          const q = k * tr.objects + j;
          tr.x[q] = tr.y[q] = Number.NaN;
          tr.main[q] = 0;
        }
      }
    }
    return tr;
  });
  const ev = diffusionEvidence(prepareTracks({ dimension: 2, t: times, realisations: real }), {
    seed: "loss/b",
    replicates: 400,
  });
  assert.equal(ev.status, "no-diffusive-regime");
  assert.match(ev.reasons[0], /falls below 50 %/);
  const ll = ev.lossLimited!;
  assert.ok(ll !== null && ll.lossAt < ll.tEnd, "loss-limited estimate over [t₁, end]");
  const e = ll.estimator;
  console.log(`loss-limited D = ${e.D}`, e.ci?.bca, `exponent ${e.exponent.value}`);
  assert.ok(e.exponent.pass, e.exponent.reason ?? "");
  assertWithin(0.25, e.ci!.bca!.lower, e.ci!.bca!.upper, "true D in the loss-limited interval");
});

/** Coverage experiment: M ensembles of OU walkers (40 realisations × 10 walkers, run to 15 = 150τ). */
function coverage(
  M: number,
  B: number,
): { declared: number; covered: number; lowSupport: number; unflagged: number } {
  const times = uniformTimes(15, 0.2);
  let declared = 0, covered = 0, lowSupport = 0, unflagged = 0;
  for (let m = 0; m < M; m++) {
    const ens = walkerTrackEnsemble(
      { kind: "ornstein-uhlenbeck", dimension: 2, walkers: 10, D: 0.25, tau: 0.1, times },
      { realisations: 40, seed: `coverage/${m}` },
    );
    const ev = diffusionEvidence(prepareTracks(ens), { seed: `coverage/${m}/b`, replicates: B });
    if (ev.support!.fraction < 0.9) {
      lowSupport++;
      const flagged = ev.status !== "ok" || ev.warnings.some((w) => w.includes("find no diffusive window"));
      if (!flagged) unflagged++;
    }
    if (ev.status !== "ok") continue;
    declared++;
    if (ev.answer!.lower! <= 0.25 && 0.25 <= ev.answer!.upper!) covered++;
  }
  return { declared, covered, lowSupport, unflagged };
}

Deno.test("diffusionEvidence coverage: 200 ensembles whose local exponent is noisy near the band's edge: ≥ 93 % of the declared intervals hold D, low support is always flagged", () => {
  // 10 OU walkers per realisation (Uhlenbeck & Ornstein 1930): α(t) scatters by ±0.1–0.2 at the end of the run,
  // where the old point-by-point rule failed clean data. Coverage of a 95 % interval over M repetitions:
  // 0.95 ± 2√(0.95·0.05/M) (docs/check-values.md §6.4); the issue asks ≥ 93 %.
  const r = coverage(200, 400);
  console.log(
    `declared ${r.declared}/200, coverage ${r.covered}/${r.declared} = ${r.covered / r.declared}, ` +
      `support < 90 %: ${r.lowSupport} (unflagged ${r.unflagged})`,
  );
  assert.ok(r.covered / r.declared >= 0.93, `coverage ${r.covered / r.declared}`);
  // Clean diffusion is mostly declared; the rest fails the window rule (t₂/t₁ ≥ 5 with a noisy τ_c) or an
  // exponent at this small ensemble size, and is then stated as such, never given a number.
  assert.ok(r.declared >= 160, `clean diffusion declared in ${r.declared}/200`);
  assert.equal(r.unflagged, 0, "every ensemble with > 10 % window-less replicates is flagged");
});

Deno.test({
  name: "diffusionEvidence coverage over 1000 ensembles (SPINDRIFT_LONG)",
  ignore: !LONG,
  fn() {
    const r = coverage(1000, 1000);
    console.log(
      `declared ${r.declared}/1000, coverage ${r.covered / r.declared}, low support ${r.lowSupport}`,
    );
    assert.ok(r.covered / r.declared >= 0.93);
    assert.equal(r.unflagged, 0);
  },
});

Deno.test("diffusionEvidence refuses bad options and subsets with clear messages", () => {
  const ens = walkerTrackEnsemble(
    { kind: "brownian", dimension: 2, walkers: 3, D: 1, times: uniformTimes(2, 0.5) },
    { realisations: 2, seed: "bad" },
  );
  const p = prepareTracks(ens);
  assert.throws(() => diffusionEvidence(p, { seed: "" }), /seed/);
  assert.throws(() => diffusionEvidence(p, { seed: "s", replicates: 1 }), /replicates/);
  assert.throws(() => diffusionEvidence(p, { seed: "s", realisations: [0, 5] }), /outside \[0, 2\)/);
  assert.throws(() => diffusionEvidence(p, { seed: "s", rules: { lagFraction: 2 } }), /lagFraction/);
  assert.throws(() => prepareTracks({ ...ens, t: [0, 1] }), /at least 3 frames/);
  assert.throws(
    () => prepareTracks({ ...ens, realisations: [{ ...ens.realisations[0], main: new Uint8Array(2) }] }),
    /main has 2 values/,
  );
});
