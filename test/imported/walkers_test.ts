/**
 * The example data set test/imported/walkers/ (synthetic Ornstein–Uhlenbeck walkers with a known D): the committed
 * files are exactly what the seeded generator writes, they import through the engine, and their displacement
 * statistics match the exact MSD law they were drawn from.
 */
import { assert, assertClose, assertEquals } from "../_assert.ts";
import { importedTracks2dEngine } from "../../engines/imported/mod.ts";
import type { Frame } from "../../engines/contract.ts";
import { RandomStream } from "../../engines/random.ts";
import { walkerCsv, walkerMsd, walkerPath, WALKERS } from "./make_walkers.ts";

const ROOT = new URL("../../", import.meta.url);

/** Positions of every walker of every realisation: xs[r][k][2i + c]. */
async function importAll(): Promise<Float64Array[][]> {
  const params = importedTracks2dEngine.paramsSchema.parse({
    source: { files: "test/imported/walkers/r{index}.csv", directory: ROOT.pathname },
  });
  const { times, dt, walkers } = WALKERS;
  const controls = { duration: (times - 1) * dt, sampleInterval: dt, tolerance: 1e-9, maxDistance: 1e6 };
  const out: Float64Array[][] = [];
  for (let r = 0; r < WALKERS.realisations; r++) {
    const frames: Float64Array[] = [];
    await importedTracks2dEngine.run(
      { params, controls, rng: RandomStream.fromState([1, 2, 3, 4]), realisationIndex: r },
      {
        frame(f: Frame) {
          assertEquals(f.n, walkers);
          const p = new Float64Array(2 * walkers);
          for (let i = 0; i < walkers; i++) {
            assertEquals(f.id[i], i);
            p[2 * i] = f.x[i];
            p[2 * i + 1] = f.y[i];
          }
          frames.push(p);
        },
        event() {
          throw new Error("walkers never end their tracks");
        },
      },
    );
    assertEquals(frames.length, times);
    out.push(frames);
  }
  return out;
}

Deno.test("make_walkers: the committed files are exactly the seeded generator's output, under 2 MB", async () => {
  let bytes = 0;
  for (let r = 0; r < WALKERS.realisations; r++) {
    const committed = await Deno.readTextFile(new URL(walkerPath(r), ROOT));
    assert(
      committed === walkerCsv(r),
      `${walkerPath(r)} differs from the generator; run test/imported/make_walkers.ts`,
    );
    bytes += new TextEncoder().encode(committed).length;
  }
  // Small enough for the repository, large enough for ≥ 20 realisations (docs/methods.md §5.1) of the example study.
  assert(bytes < 2_000_000, `the walkers data set is ${bytes} bytes`);
});

Deno.test("walkers: long-lag increments give D (Einstein relation with the exact OU offset)", async () => {
  const xs = await importAll();
  const { dt, tau, diffusion } = WALKERS;
  // Non-overlapping windows of h = 2 (20 τ). For a stationary OU velocity each component of a displacement over h
  // has ⟨Δx²⟩ = 2D[h − τ(1 − e^{−h/τ})] (Uhlenbeck & Ornstein, Phys. Rev. 36, 823 (1930); docs/check-values.md §6.1).
  const lag = 20;
  const h = lag * dt;
  let sum = 0;
  let count = 0;
  for (const frames of xs) {
    for (let k = 0; k + lag < frames.length; k += lag) {
      for (let c = 0; c < frames[k].length; c++) {
        const d = frames[k + lag][c] - frames[k][c];
        sum += d * d;
        count++;
      }
    }
  }
  const dHat = sum / (count * 2 * (h - tau * (1 - Math.exp(-h / tau))));
  // Relative standard deviation √(2/n) for n independent components (χ² statistics, docs/check-values.md §6.2); the
  // windows' velocity correlation (≈ τ/h) barely changes it. 4σ band.
  const rtol = 4 * Math.sqrt(2 / count);
  console.log(
    `  D̂ = ${dHat.toFixed(5)} from ${count} increments (D = ${diffusion}, 4σ = ${(100 * rtol).toFixed(1)}%)`,
  );
  assertClose(dHat, diffusion, rtol, "D from long-lag increments");
});

Deno.test("walkers: the ensemble MSD from t = 0 follows 4D[t − τ(1 − e^{−t/τ})], ballistic start included", async () => {
  const xs = await importAll();
  const { walkers, realisations } = WALKERS;
  const n = 2 * walkers * realisations;
  // At each test time the MSD estimate over n independent Gaussian components has relative standard deviation
  // √(2/n) (docs/check-values.md §6.2); its expectation is the exact OU law (Uhlenbeck & Ornstein 1930). At t = 0.1 = τ
  // the walkers are still ballistic: a pure random walk with the same D would give 4Dt, 2.7× more.
  for (const k of [1, 3, 10, 50, WALKERS.times - 1]) {
    let sum = 0;
    for (const frames of xs) {
      for (let c = 0; c < frames[0].length; c++) {
        const d = frames[k][c] - frames[0][c];
        sum += d * d;
      }
    }
    const t = k * WALKERS.dt;
    const msd = (2 * sum) / n; // two components per walker
    const rtol = 4 * Math.sqrt(2 / n);
    const exact = walkerMsd(t).toPrecision(5);
    console.log(
      `  t = ${t.toFixed(1)}: MSD ${msd.toPrecision(5)}, exact ${exact}, 4σ ${(100 * rtol).toFixed(0)}%`,
    );
    assertClose(msd, walkerMsd(t), rtol, `MSD(t = ${t})`);
  }
  // Ballistic vs diffusive at t = τ: exact ratio MSD/(4Dt) = 1 − (1 − e^{−1}) = e^{−1} ≈ 0.368.
  assertClose(
    walkerMsd(0.1) / (4 * WALKERS.diffusion * 0.1),
    Math.exp(-1),
    1e-12,
    "ballistic ratio at t = τ",
  );
});
