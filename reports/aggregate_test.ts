import assert from "node:assert/strict";
import { DatabaseSync } from "node:sqlite";
import { openStoreReadOnly } from "../store/reads.ts";
import { aggregateStudy, studyOverview } from "./aggregate.ts";
import { type FixtureStudy, syntheticStudy, tinyStudy, writeFixtureDb } from "./_fixture.ts";
import { NO_INTERVAL_N1 } from "./intervals.ts";
import { assertClose } from "./_testing.ts";

// t_{0.975,2} = 4.3027: Abramowitz & Stegun (1964) Table 26.10; NIST/SEMATECH e-Handbook §1.3.6.7.2.
const T975_2 = 4.3027;

function withDb<T>(study: FixtureStudy, fn: (db: DatabaseSync, path: string) => T): T {
  const dir = Deno.makeTempDirSync();
  try {
    const path = `${dir}/s.sqlite`;
    writeFixtureDb(path, study);
    const db = openStoreReadOnly(path);
    try {
      return fn(db, path);
    } finally {
      db.close();
    }
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
}

Deno.test("aggregateStudy: per-frame mean, sd and 95 % interval equal the hand computation", () => {
  withDb(tinyStudy(), (db) => {
    const agg = aggregateStudy(db);
    const a = agg.points[0];
    const msd = a.series.get("msd")!;
    assert.deepEqual([...msd.k], [0, 1, 2]);
    assert.deepEqual([...msd.t], [0, 0.5, 1]);
    assert.deepEqual([...msd.n], [3, 3, 3], "failed and beyond-plan realisations are excluded");
    // k = 1: values 1, 2, 3 → mean 2, s = 1, half-width t_{0.975,2}/√3. Relative tolerance 1e-4 (table digits).
    assertClose(msd.mean[1], 2, 1e-15, "mean k=1");
    assertClose(msd.sd[1], 1, 1e-15, "sd k=1");
    assertClose(msd.upper[1], 2 + T975_2 / Math.sqrt(3), 1e-4, "upper k=1");
    assertClose(msd.lower[1], 2 - T975_2 / Math.sqrt(3), 1e-4, "lower k=1");
    // k = 2: values 4, 5, 9 → mean 6, Σ(x − 6)² = 4 + 1 + 9 = 14, s² = 7, half-width t·√(7/3).
    assertClose(msd.mean[2], 6, 1e-15, "mean k=2");
    assertClose(msd.sd[2], Math.sqrt(7), 1e-14, "sd k=2");
    assertClose(msd.upper[2], 6 + T975_2 * Math.sqrt(7 / 3), 1e-4, "upper k=2");
    // k = 0: all zero → sd 0 and a zero-width interval.
    assert.equal(msd.sd[0], 0);
    assert.equal(msd.lower[0], 0);
    assert.equal(msd.upper[0], 0);
  });
});

Deno.test("aggregateStudy: counts, drifts, events, evaporated and failures of each point", () => {
  withDb(tinyStudy(), (db) => {
    const agg = aggregateStudy(db);
    assert.equal(agg.overview.realisations, 4);
    const [a, b] = agg.points;
    assert.deepEqual(a.counts, { planned: 4, done: 3, failed: 1, running: 0, missing: 0, extra: 1 });
    assert.deepEqual(b.counts, { planned: 4, done: 1, failed: 0, running: 1, missing: 2, extra: 0 });
    assert.deepEqual(
      a.drifts.map((d) => [d.invariant, d.index, d.value]),
      [["hamiltonian", 0, 1e-10], ["hamiltonian", 1, -3e-10], ["hamiltonian", 2, 0]],
    );
    // Events of done realisations only: 2 + 1 annihilations (the failed run's one is not counted).
    assert.deepEqual(a.events, { annihilation: 3 });
    // steps over done runs 10, 20, 60: mean 30, Σ(x − 30)² = 400 + 100 + 900 = 1400, s = √700.
    const steps = a.scalars.get("steps")!;
    assert.equal(steps.n, 3);
    assertClose(steps.mean, 30, 1e-15, "steps mean");
    assertClose(steps.sd, Math.sqrt(700), 1e-14, "steps sd");
    // Evaporated: no evaporated_final scalar at point a → last evaporated_count values 2, 1, 3 (mean 2).
    assert.equal(a.evaporated.source, "series");
    assert.deepEqual(a.evaporated.perRealisation.map((p) => p.value), [2, 1, 3]);
    assertClose(a.evaporated.interval.mean, 2, 1e-15, "evaporated mean");
    assert.equal(b.evaporated.source, "scalar");
    assert.equal(b.evaporated.interval.mean, 5);
    assert.equal(b.evaporated.interval.note, NO_INTERVAL_N1);
    // Point b: one done realisation → mean without interval; the NULL at k = 2 gives n = 0 there.
    const msdB = b.series.get("msd")!;
    assert.deepEqual([...msdB.n], [1, 1, 0]);
    assert.equal(msdB.mean[1], 7);
    assert.ok(Number.isNaN(msdB.lower[1]) && Number.isNaN(msdB.upper[1]));
    assert.ok(Number.isNaN(msdB.mean[2]));
    assert.deepEqual(
      agg.failures.map((f) => [f.pointLabel, f.index, f.status, f.kind, f.error, f.simTimeReached]),
      [["a", 3, "failed", "blow-up", "vortex 3 left the domain", 0.75], [
        "b",
        1,
        "running",
        null,
        null,
        null,
      ]],
    );
  });
});

Deno.test("aggregateStudy agrees with a two-pass computation from the raw series rows", () => {
  withDb(syntheticStudy(), (db, path) => {
    const agg = aggregateStudy(db);
    // Independent path: plain SQL over done realisations below the planned count, two-pass mean and sd.
    const raw = new DatabaseSync(path, { readOnly: true });
    try {
      let checked = 0;
      for (const p of agg.points) {
        for (const [name, band] of p.series) {
          for (let j = 0; j < band.k.length; j++) {
            const rows = raw.prepare(
              `SELECT s.value FROM series s JOIN realisations r ON r.id = s.realisation_id
                WHERE r.point_hash = ? AND r.status = 'done' AND r.idx < 4 AND s.name = ? AND s.k = ?
                  AND s.value IS NOT NULL`,
            ).all(p.point.pointHash, name, band.k[j]).map((r) => Number(r.value));
            const n = rows.length;
            const mean = rows.reduce((s, x) => s + x, 0) / n;
            const sd = Math.sqrt(rows.reduce((s, x) => s + (x - mean) ** 2, 0) / (n - 1));
            assert.equal(band.n[j], n);
            // Welford vs two-pass: agree to rounding (relative 1e-12; absolute 1e-12 near zero).
            assertClose(band.mean[j], mean, 1e-12, `${p.point.label} ${name} mean k=${band.k[j]}`);
            if (sd > 0) {
              // Both sd values carry rounding of order ε·|mean| (e.g. diag.hamiltonian ≈ −12.5 with a spread of
              // 1e-9), so the tolerance is 1e-9 relative plus 1e-14·|mean|/sd (common practice, no source).
              const rel = 1e-9 + 1e-14 * Math.abs(mean) / sd;
              assertClose(band.sd[j], sd, rel, `${p.point.label} ${name} sd k=${band.k[j]}`);
              // n = 3 everywhere here: t_{0.975,2} from A&S Table 26.10, relative tolerance 1e-4.
              const half = T975_2 * sd / Math.sqrt(n);
              assertClose(band.upper[j] - mean, half, 1e-4 + rel, `${name} half-width k=${band.k[j]}`);
            }
            checked++;
          }
        }
      }
      assert.ok(checked > 300, `checked ${checked} (point, series, frame) cells`);
    } finally {
      raw.close();
    }
  });
});

Deno.test("studyOverview reads what it can and tolerates a malformed normalized study", () => {
  assert.deepEqual(studyOverview({ realisations: 8, seed: 42, run: { duration: 3 }, observables: [] }), {
    realisations: 8,
    seed: "42",
    run: { duration: 3 },
    observables: null,
  });
  assert.deepEqual(studyOverview("garbage"), {
    realisations: null,
    seed: null,
    run: null,
    observables: null,
  });
  assert.equal(studyOverview({ realisations: 2.5 }).realisations, null);
});

Deno.test("aggregateStudy with opts.series computes bands for those series only", () => {
  withDb(syntheticStudy(), (db) => {
    const all = aggregateStudy(db);
    assert.deepEqual([...all.points[0].series.keys()], [
      "cluster_rms_radius",
      "diag.hamiltonian",
      "evaporated_count",
      "msd",
    ]);
    const some = aggregateStudy(db, { series: ["msd", "not-stored"] });
    assert.deepEqual([...some.points[0].series.keys()], ["msd"]);
    assert.deepEqual([...some.points[0].series.get("msd")!.mean], [...all.points[0].series.get("msd")!.mean]);
  });
});
