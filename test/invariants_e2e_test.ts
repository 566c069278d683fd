/**
 * Invariants checked, not only stored: a conservative point-vortex run (α = 0, no annihilation, N = 50,
 * t = 20) keeps its Hamiltonian within the engine's stated threshold (relative drift 1e-6), and the analysis
 * says so; the same cloud with loose step control (tolerance 1e-2 and a step cap of 1 d_min²/κ — with the
 * default cap 0.2 the cap alone keeps steps small whatever the tolerance) drifts past it and `analyse` flags the
 * realisations. Energy, linear and angular impulse of point vortices in the plane: P.K. Newton, The N-Vortex
 * Problem (Springer, 2001), §2.1; thresholds: engines/point-vortex/credibility.ts.
 */
import { analyseStudy } from "../analysis/mod.ts";
import { normalizeText, runForTest } from "./_study.ts";
import { tempDir } from "./_tmp.ts";
import { assert, assertEquals } from "./_assert.ts";

function cloud(run: string, cap: number): string {
  return `name: conservative-cloud
description: A neutral cloud without friction or annihilation.
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 50, polarity: 0, radius: 1.0, minSeparation: 0.05 }
  integrator: { stepCapFactor: ${cap} }
realisations: 2
seed: 4
run: ${run}
observables: { record: [cluster] }
`;
}

async function invariants(text: string, realisations: number) {
  const dir = tempDir("invariants-");
  try {
    const db = `${dir}/s.sqlite`;
    await runForTest(normalizeText(text.replace("realisations: 2", `realisations: ${realisations}`)), db, 2);
    const s = await analyseStudy(db, {
      replicates: 0,
      vinenReplicates: 0,
      sensitivity: false,
      correlations: false,
      workers: 1,
    });
    return s.points[0].invariants;
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
}

Deno.test("invariants: a conservative run keeps H within 1e-6; loose step control exceeds it and is flagged", async () => {
  const good = await invariants(cloud("{ duration: 20, sampleInterval: 1 }", 0.2), 1);
  const h = good.invariants.find((i) => i.scalar === "drift.hamiltonian")!;
  console.log(`default numerics: H drift ${h.maxDrift?.toExponential(2)} (threshold ${h.threshold})`);
  assertEquals(good.status, "ok");
  assertEquals(h.status, "ok");
  assert(h.maxDrift! < h.threshold);
  assertEquals(good.invariants.find((i) => i.scalar === "drift.impulse")!.status, "ok");

  const loose = await invariants(cloud("{ duration: 20, sampleInterval: 1, tolerance: 1.0e-2 }", 1), 2);
  const hl = loose.invariants.find((i) => i.scalar === "drift.hamiltonian")!;
  console.log(`loose step control: H drift ${hl.maxDrift?.toExponential(2)}; flagged ${hl.flagged.length}`);
  assertEquals(loose.status, "flagged");
  assert(hl.flagged.length >= 1 && hl.flagged.every((f) => f.drift > 1e-6));
  assert(loose.reason!.includes("Hamiltonian H"), loose.reason!);
});

Deno.test("invariants: with friction the analysis says why they are not conserved instead of checking", async () => {
  const text = cloud("{ duration: 2, sampleInterval: 1 }", 0.2).replace(
    "  integrator:",
    "  friction: { alpha: 0.05 }\n  integrator:",
  );
  const a = await invariants(text, 1);
  assertEquals(a.status, "not-conserved");
  assert(a.reason!.includes("mutual friction (α = 0.05"), a.reason!);
});
