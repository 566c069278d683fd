/**
 * Planning a study end to end: `spindrift pilot` (costs measured and projected, estimate stored and shown by
 * `check`) and `run --until` (Stein's two-stage rule on a real engine: the total fixed by the first stage, the
 * added realisations are the study's next indices, a rerun stores the same numbers and computes nothing, the
 * analysis then uses them). Stein's coverage itself is measured in sequential_coverage_test.ts.
 */
import { DatabaseSync } from "node:sqlite";
import { runPilot } from "../credibility/pilot.ts";
import { runUntilPrecise } from "../credibility/sequential.ts";
import { meanAndSd, projectedHalfWidth, steinSampleSize } from "../analysis/estimators/mod.ts";
import { analyseStudy } from "../analysis/mod.ts";
import { withRealisations } from "../study/normalize.ts";
import { planStudy } from "../study/plan.ts";
import { createProgress } from "../study/progress.ts";
import { digestResults, normalizeText } from "./_study.ts";
import { runCli } from "./_cli.ts";
import { tempDir } from "./_tmp.ts";
import { assert, assertClose, assertEquals } from "./_assert.ts";

const PROV = { toolVersion: "test", denoVersion: Deno.version.deno, gitCommit: null };
const quiet = createProgress({ quiet: true });

function patch(realisations: number): string {
  return `name: plan-patch
description: A small neutral patch under friction, for the planning tests.
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 20, polarity: 0, radius: 1.0, minSeparation: 0.04 }
  annihilationDistance: 0.02
  friction: { alpha: 0.02 }
  integrator: { stepCapFactor: 2 }
sweep:
  grid:
    initial.count: [16, 24]
realisations: ${realisations}
seed: 21
run: { duration: 3, sampleInterval: 0.1, tolerance: 1.0e-6 }
observables: { record: [cluster, evaporation, msd] }
`;
}

Deno.test("pilot: runs the study's first realisations, measures and projects them, stores the estimate", async () => {
  const dir = tempDir("pilot-");
  try {
    const path = `${dir}/plan-patch.yaml`;
    await Deno.writeTextFile(path, patch(24));
    const study = normalizeText(patch(24), path);
    const db = `${dir}/plan-patch.sqlite`;
    const out = await runPilot(study, {
      dbPath: db,
      workers: 2,
      realisations: 6,
      provenance: PROV,
      progress: quiet,
    });
    assert(!out.interrupted);
    const e = out.estimate;
    assertEquals(e.points.map((p) => [p.done, p.remaining]), [[6, 18], [6, 18]]);
    for (const p of e.points) {
      assertEquals(p.cpuSeconds.length, 6);
      assert(p.peakBytes.every((b) => b > 0), "peak memory measured");
      // Rows of a realisation: at least its 31 frames of 16–24 vortices (29 bytes each) and 31 × series rows.
      assert(p.storedBytes.every((b) => b > 31 * 16 * 29), `stored bytes ${p.storedBytes}`);
      const r = p.results.find((x) => x.name === "cluster_radius")!;
      assertEquals(r.status, "ok");
      // The projection is t_{0.975, N−1}·s/√N of the pilot's spread (stein.ts).
      const at24 = r.curve.find((c) => c.N === 24)!.halfWidth;
      assertClose(at24, projectedHalfWidth(r.sd, 24), 1e-12, "half-width at N = 24");
      assert(r.recommended !== null && projectedHalfWidth(r.sd, r.recommended) <= 0.1 * Math.abs(r.mean));
      const d = p.results.find((x) => x.name === "D")!;
      assertEquals(d.status, "no-diffusive-regime", "a 3-time-unit patch has no diffusive regime");
      assert(d.reason!.startsWith("no diffusive regime in the pilot"), d.reason!);
    }
    assert(e.totals.databaseBytesPerRealisation > 0 && e.totals.cpuSeconds > 0);
    assertEquals(e.totals.remaining, 36);
    // Only the pilot's indices were run; `run` later keeps them.
    const s = new DatabaseSync(db, { readOnly: true });
    const idx = (s.prepare("SELECT DISTINCT idx FROM realisations ORDER BY idx").all() as { idx: number }[])
      .map((r) => r.idx);
    s.close();
    assertEquals(idx, [0, 1, 2, 3, 4, 5]);
    const check = await runCli(["check", path]);
    assertEquals(check.code, 0, check.stderr);
    assert(check.stdout.includes("last pilot ("), check.stdout);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("run --until: Stein's total from the first stage, the next indices, reruns store the same numbers", async () => {
  const dir = tempDir("until-");
  try {
    const study = normalizeText(patch(6), `${dir}/plan-patch.yaml`);
    const db = `${dir}/plan-patch.sqlite`;
    const opts = { dbPath: db, workers: 2, cap: 40, batch: 6, provenance: PROV, progress: quiet };
    const until = { result: "cluster_radius", target: 0.08, relative: true };
    const r = await runUntilPrecise(study, until, opts);
    assert(!r.interrupted);
    // The total is Stein's N from the first stage's spread, the largest over the points, capped.
    const s = new DatabaseSync(db, { readOnly: true });
    const first = study.points.map((p) => {
      const rows = s.prepare(
        `SELECT r.idx, (SELECT value FROM series WHERE realisation_id = r.id AND name = 'cluster_rms_radius'
           ORDER BY k DESC LIMIT 1) AS v FROM realisations r WHERE r.point_hash = ? AND r.idx < 6 ORDER BY r.idx`,
      ).all(p.pointHash) as { v: number }[];
      const m = meanAndSd(rows.map((x) => x.v));
      return steinSampleSize({ n: m.n, sd: m.sd }, { halfWidth: 0.08 * Math.abs(m.mean), cap: 40 }).total;
    });
    assertEquals(r.total, Math.max(6, ...first));
    assert(r.total > 6, `the target should need more than the first stage (N = ${r.total})`);
    // Stored realisations are exactly those a study of N realisations plans: the next indices, same keys.
    const keys =
      (s.prepare("SELECT realisation_key AS k FROM realisations ORDER BY k").all() as { k: string }[])
        .map((x) => x.k);
    const latest = s.prepare("SELECT normalized_json FROM studies ORDER BY id DESC LIMIT 1").get() as {
      normalized_json: string;
    };
    s.close();
    assertEquals(keys, planStudy(withRealisations(study, r.total)).map((p) => p.key).sort());
    assertEquals(JSON.parse(latest.normalized_json).realisations, r.total);
    for (const p of r.points) {
      assert(p.final !== null && p.plan !== null);
      assertEquals(p.final.n, r.total);
      assert(p.final.lower < p.final.value && p.final.value < p.final.upper);
      if (p.plan.reachable && p.plan.total === r.total) {
        assert(p.final.halfWidth <= p.halfWidth! * (1 + 1e-12), "the target is met where N was this point's");
      }
    }
    const digest = digestResults(db);
    const again = await runUntilPrecise(study, until, opts);
    assertEquals(again.total, r.total);
    assertEquals(again.stage1.completed + (again.stage2?.completed ?? 0), 0, "a rerun computes nothing");
    assertEquals(digestResults(db), digest);
    // The analysis uses the extended revision: all N realisations.
    const a = await analyseStudy(db, {
      replicates: 0,
      vinenReplicates: 0,
      sensitivity: false,
      correlations: false,
      workers: 1,
    });
    assertEquals(a.points.map((p) => p.realisations), [r.total, r.total]);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("cli: pilot, audit and run --until explain themselves and refuse what they cannot do", async () => {
  const help = await runCli(["--help"]);
  assert(/pilot \[options\] <study>/.test(help.stdout) && /audit \[options\] <database>/.test(help.stdout));
  const dir = tempDir("plan-cli-");
  try {
    const path = `${dir}/one.yaml`;
    await Deno.writeTextFile(path, patch(1));
    const until = await runCli(["run", path, "--until", "evaporated=10%"]);
    assertEquals(until.code, 1);
    assert(until.stderr.includes("at least 2 realisations per point"), until.stderr);
    const bad = await runCli(["run", path, "--until", "speed=3"]);
    assert(bad.stderr.includes("unknown result 'speed'"), bad.stderr);
    const yaml = await runCli(["audit", path]);
    assertEquals(yaml.code, 1);
    assert(yaml.stderr.includes("give the database"), yaml.stderr);
    const missing = await runCli(["audit", `${dir}/nothing.sqlite`]);
    assertEquals(missing.code, 1);
    assert(!/\n\s+at .+:\d+:\d+/.test(missing.stderr), missing.stderr);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});
