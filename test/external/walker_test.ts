/**
 * The stand-in program test/external/walker.mjs: deterministic for a seed, the export layout, and
 * Ornstein–Uhlenbeck random-walk statistics with the diffusion coefficient, correlation time and initial cloud
 * size it was given.
 */
import { assert, assertEquals } from "../_assert.ts";
import { chiSquareDiffusionInterval } from "../../analysis/estimators/chi2.ts";
import { ouLag } from "./_helpers.ts";

const WALKER = new URL("./walker.mjs", import.meta.url).pathname;

/** Runs the walker in a fresh folder; returns its exit code, output file text (or null) and stderr. */
async function runWalker(
  opts: {
    seed: string;
    D: number;
    tau: number;
    duration: number;
    dt: number;
    count: number;
    sigma0: number;
    extra?: string[];
  },
): Promise<{ code: number; csv: string | null; stderr: string }> {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-walker-" });
  try {
    await Deno.writeTextFile(`${dir}/c.json`, JSON.stringify({ sigma0: opts.sigma0 }));
    const out = await new Deno.Command("node", {
      args: [
        WALKER,
        "--seed",
        opts.seed,
        "--diffusion",
        String(opts.D),
        "--tau",
        String(opts.tau),
        "--duration",
        String(opts.duration),
        "--dt",
        String(opts.dt),
        "--config",
        "c.json",
        "--out",
        `${dir}/o.csv`,
        ...(opts.extra ?? []),
      ],
      cwd: dir,
      env: { WALKER_COUNT: String(opts.count) },
      stdout: "piped",
      stderr: "piped",
    }).output();
    let csv: string | null = null;
    try {
      csv = await Deno.readTextFile(`${dir}/o.csv`);
    } catch {
      csv = null;
    }
    return { code: out.code, csv, stderr: new TextDecoder().decode(out.stderr) };
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
}

/** Rows of the walker's CSV as numbers [t, id, x, y, circulation]. */
function rows(csv: string): number[][] {
  const lines = csv.trimEnd().split("\n");
  assertEquals(lines[0], "t,id,x,y,circulation");
  return lines.slice(1).map((l) => l.split(",").map(Number));
}

const base = { seed: "18446744073709551557", D: 0.25, tau: 0.1, duration: 5, dt: 0.1, count: 200, sigma0: 2 };

Deno.test("walker.mjs writes the export layout: one row per walker per frame, ids, alternating circulation", async () => {
  const r = await runWalker({ ...base, duration: 1, count: 3 });
  assertEquals(r.code, 0, r.stderr);
  const data = rows(r.csv!);
  assertEquals(data.length, 11 * 3);
  for (let k = 0; k <= 10; k++) {
    for (let i = 0; i < 3; i++) {
      const [t, id, , , c] = data[3 * k + i];
      assertEquals(t, k * 0.1);
      assertEquals(id, i);
      assertEquals(c, i % 2 === 0 ? 1 : -1);
    }
  }
});

Deno.test("walker.mjs gives identical bytes for the same seed and other tracks for another seed", async () => {
  const a = await runWalker({ ...base, duration: 2 });
  const b = await runWalker({ ...base, duration: 2 });
  const c = await runWalker({ ...base, duration: 2, seed: "18446744073709551556" });
  assert(a.csv !== null && a.csv === b.csv);
  assert(a.csv !== c.csv);
});

Deno.test("walker.mjs: displacements give its D, ballistic and diffusive, and the first frame its sigma0", async () => {
  const r = await runWalker(base);
  assertEquals(r.code, 0, r.stderr);
  const data = rows(r.csv!);
  const n = base.count;
  const last = Math.round(base.duration / base.dt);
  assertEquals(data.length, (last + 1) * n);
  // Each walker's displacement from t = 0 is exactly N(0, 2D·g(t) I₂), g(t) = t − τ(1 − e^{−t/τ}) (Uhlenbeck &
  // Ornstein, Phys. Rev. 36, 823 (1930)), and walkers are independent: Σ|Δr|²/(2n g) estimates D with
  // 2nD̂/D ~ χ²_{2n}, the exact interval of docs/check-values.md §6.2 with Δt replaced by g(t).
  for (const k of [1, 10, last]) {
    const sq = data.slice(0, n).map((row0, i) => {
      const row = data[k * n + i];
      return (row[2] - row0[2]) ** 2 + (row[3] - row0[3]) ** 2;
    });
    const t = k * base.dt;
    const ci = chiSquareDiffusionInterval(sq, { dimension: 2, dt: ouLag(t, base.tau) });
    console.log(
      `t = ${t.toFixed(1)}: D = ${ci.D.toFixed(4)} [${ci.lower.toFixed(4)}, ${ci.upper.toFixed(4)}]`,
    );
    assert(ci.lower <= base.D && base.D <= ci.upper, `t = ${t}: got ${ci.D} [${ci.lower}, ${ci.upper}]`);
  }
  // Initial positions are N(0, σ0² I₂): |r|² has the law of a 2D increment with 2D·dt = σ0², so with dt = 1/2
  // the same exact interval bounds σ0² (χ² with 2n degrees of freedom, Abramowitz & Stegun §26.4).
  const r2 = data.slice(0, n).map((row) => row[2] ** 2 + row[3] ** 2);
  const s = chiSquareDiffusionInterval(r2, { dimension: 2, dt: 0.5 });
  const s2 = base.sigma0 ** 2;
  assert(s.lower <= s2 && s2 <= s.upper, `sigma0²: got ${s.D} [${s.lower}, ${s.upper}], expected ${s2}`);
});

Deno.test("walker.mjs refuses bad input with a message and exit code 2, and fails on request", async () => {
  const badSeed = await runWalker({ ...base, seed: "18446744073709551616" });
  assertEquals(badSeed.code, 2);
  assert(badSeed.stderr.includes("--seed must be an integer in [0, 2^64)"), badSeed.stderr);
  const badCount = await runWalker({ ...base, count: 0 });
  assertEquals(badCount.code, 2);
  assert(badCount.stderr.includes("WALKER_COUNT must be a whole number"), badCount.stderr);
  const failing = await runWalker({ ...base, extra: ["--fault", "exit"] });
  assertEquals(failing.code, 3);
  assertEquals(failing.csv, null);
  const silent = await runWalker({ ...base, duration: 1, extra: ["--fault", "no-output"] });
  assertEquals([silent.code, silent.csv], [0, null]);
  const malformed = await runWalker({ ...base, duration: 1, count: 4, extra: ["--fault", "malformed"] });
  assert(malformed.csv!.split("\n")[5 * 4 + 3 + 1].split(",")[2] === "1.2.3");
});
