/**
 * The numerical audit end to end (`credibility/audit.ts`): small studies run, then audited with the engine's
 * refinement table; the verdicts are checked against what the numerics should give.
 *
 * - 2D: a deliberately under-resolved study (tolerance 1e-2, step cap 10 d_min²/κ) must be flagged "numerics
 *   not converged"; the same study at the default numerics must not be (every paired difference within its
 *   tolerance).
 * - 3D: single rings resolved with δ = 0.2 R: the audit at δ/2 (time-step factor ÷2) reproduces the ring speed
 *   and the line length, and the refined speed matches the thin-ring formula U = (κ/4πR)[ln(8R/a₀) − β] with the
 *   straight-segment β = 3/4 − γ_E (R.J. Donnelly, Quantized Vortices in Helium II (1991), §2 for the ring speed;
 *   β of the discretisation: docs/methods.md §2.2) within 0.5 %; a ring with δ = R (9 points) is flagged.
 * - Reruns store the same numbers; an interrupted audit resumes; the study database keeps its realisations.
 */
import { DatabaseSync } from "node:sqlite";
import { type AuditReport, defaultAuditDb, runAudit } from "../credibility/audit.ts";
import { createProgress } from "../study/progress.ts";
import { normalizeText, runForTest } from "./_study.ts";
import { tempDir } from "./_tmp.ts";
import { assert, assertClose, assertEquals } from "./_assert.ts";
import { readEnsembleResults } from "../store/ensemble.ts";
import { openStoreReadOnly } from "../store/reads.ts";

const PROV = { toolVersion: "test", denoVersion: Deno.version.deno, gitCommit: null };
const quiet = createProgress({ quiet: true });

function patch(extra: string): string {
  return `name: audit-patch
description: A small neutral patch under friction, for the audit tests.
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 24, polarity: 0, radius: 1.0, minSeparation: 0.04 }
  annihilationDistance: 0.02
  friction: { alpha: 0.02 }
${extra}
realisations: 10
seed: 11
observables: { record: [cluster, evaporation, msd] }
`;
}

async function audited(
  text: string,
  opts: { subset: number; signal?: AbortSignal } = { subset: 6 },
): Promise<{ report: AuditReport; db: string; dir: string }> {
  const dir = tempDir("audit-");
  const db = `${dir}/study.sqlite`;
  const study = normalizeText(text, `${dir}/study.yaml`);
  await runForTest(study, db, 2);
  const report = await runAudit(db, {
    workers: 2,
    subset: opts.subset,
    provenance: PROV,
    progress: quiet,
    signal: opts.signal,
    replicates: 200,
  });
  return { report, db, dir };
}

function summaryOf(r: AuditReport, variant = "numerics") {
  return r.points[0].variants.find((v) => v.variant === variant)!;
}

Deno.test("audit: an under-resolved 2D study (tolerance 1e-2, step cap 10) is flagged 'numerics not converged'", async () => {
  const { report, dir } = await audited(
    patch("  integrator: { stepCapFactor: 10 }") +
      "run: { duration: 4, sampleInterval: 0.1, tolerance: 1.0e-2 }",
  );
  try {
    const v = summaryOf(report);
    console.log(`under-resolved: ${v.status}; ${v.reasons.join(" | ")}`);
    assertEquals(v.status, "not-converged");
    assert(v.changes.includes("integrator.stepCapFactor 10 → 0.2 (its default)"), v.changes.join("; "));
    assert(v.reasons.length > 0);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("audit: the same 2D study at default numerics is not flagged; reruns are paired, apart and reproducible", async () => {
  const text = patch("") + "run: { duration: 4, sampleInterval: 0.1 }";
  const { report, db, dir } = await audited(text);
  try {
    const v = summaryOf(report);
    for (const c of v.comparisons) {
      console.log(
        `default: ${c.quantity} Δ ${c.difference.toPrecision(3)} [${c.lower?.toPrecision(3)}, ${
          c.upper?.toPrecision(3)
        }] tolerance ${c.tolerance?.toPrecision(3)}`,
      );
    }
    assertEquals(v.status, "converged", v.reasons.join("; "));
    assert(v.comparisons.length >= 4 && v.comparisons.every((c) => !c.flagged));
    assertEquals(v.subset, [0, 1, 2, 3, 4, 5]);
    // The reruns live in their own database, with the study's seeds, and never in the study's.
    const s = new DatabaseSync(db, { readOnly: true }),
      a = new DatabaseSync(defaultAuditDb(db), { readOnly: true });
    try {
      assertEquals(
        Number((s.prepare("SELECT count(*) AS n FROM realisations").get() as { n: number }).n),
        10,
      );
      const seeds = (d: DatabaseSync) =>
        (d.prepare("SELECT seed FROM realisations WHERE idx < 6 ORDER BY idx").all() as { seed: string }[])
          .map((r) => r.seed);
      assertEquals(seeds(a), seeds(s));
      const meta = a.prepare("SELECT value FROM meta WHERE key = 'study_name'").get() as { value: string };
      assertEquals(meta.value, "audit-patch-audit");
    } finally {
      s.close();
      a.close();
    }
    // A rerun computes nothing and stores the same rows.
    const rows = () => {
      const d = openStoreReadOnly(db);
      try {
        return readEnsembleResults(d, 1, { analysis: "audit" }).map((
          r,
        ) => [r.name, r.value, r.lower, r.upper]);
      } finally {
        d.close();
      }
    };
    const before = rows();
    const again = await runAudit(db, { workers: 2, provenance: PROV, progress: quiet, replicates: 200 });
    assertEquals(summaryOf(again).subset, [0, 1, 2, 3, 4, 5], "the stored plan is reused");
    assertEquals(rows(), before);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("audit: stopped midway, it keeps what finished and resumes to the same result", async () => {
  const text = patch("  integrator: { stepCapFactor: 2 }") +
    "run: { duration: 3, sampleInterval: 0.1, tolerance: 1.0e-6 }";
  const dir = tempDir("audit-stop-");
  const db = `${dir}/study.sqlite`;
  try {
    await runForTest(normalizeText(text, `${dir}/s.yaml`), db, 2);
    const controller = new AbortController();
    let stored = 0;
    const progress = {
      start() {},
      update() {
        if (++stored === 2) controller.abort();
      },
      stop() {},
    };
    const stopped = await runAudit(db, {
      workers: 1,
      subset: 8,
      provenance: PROV,
      progress,
      signal: controller.signal,
      replicates: 100,
    });
    assert(stopped.interrupted, "the audit should report the stop");
    const audit = new DatabaseSync(defaultAuditDb(db), { readOnly: true });
    const kept = Number(
      (audit.prepare("SELECT count(*) AS n FROM realisations WHERE status = 'done'").get() as {
        n: number;
      }).n,
    );
    audit.close();
    assert(kept >= 2 && kept < 8, `kept ${kept} finished reruns`);
    const done = await runAudit(db, { workers: 2, provenance: PROV, progress: quiet, replicates: 100 });
    assert(!done.interrupted);
    assertEquals(summaryOf(done).subset.length, 8);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

function rings(kind: string, resolution: number): string {
  return `name: ring-audit
description: Single vortex rings at zero temperature, for the audit tests.
engine: vortex-filament-3d
parameters:
  units: dimensionless
  coreRadius: 1.0e-3
  resolution: ${resolution}
  initial: ${kind}
realisations: 6
seed: 5
run: { duration: 1.0, sampleInterval: 0.1 }
observables: { record: [cluster, evaporation, msd] }
`;
}

Deno.test("audit 3D: rings at δ = 0.2R reproduce ring speed and line length at δ/2; δ = R is flagged", async () => {
  const resolved = await audited(
    rings("{ kind: ring-ball, count: 1, radius: { mean: 1.0, sd: 0.1 }, cloudRadius: 2.0 }", 0.2),
  );
  try {
    const v = summaryOf(resolved.report);
    const changes = v.changes.join("; ");
    assert(
      changes.includes("resolution 0.2 → 0.1") && changes.includes("numerics.dtFactor 3 → 1.5"),
      changes,
    );
    for (const name of ["centre_speed", "line_length"]) {
      const c = v.comparisons.find((x) => x.quantity === name)!;
      console.log(
        `δ/2: ${name} Δ ${c.difference.toExponential(2)} [${c.lower?.toExponential(2)}, ${
          c.upper?.toExponential(2)
        }], tolerance ${c.tolerance?.toExponential(2)}`,
      );
      assert(!c.flagged && Math.abs(c.difference) <= c.tolerance!, `${name} moves at δ/2`);
    }
    assertEquals(v.status, "converged", v.reasons.join("; "));
    // The refined rings against the thin-ring formula (Donnelly 1991; β = 3/4 − γ_E for straight segments).
    const audit = new DatabaseSync(defaultAuditDb(resolved.db), { readOnly: true });
    try {
      const beta = 0.75 - 0.5772156649;
      const rows = audit.prepare(
        `SELECT r.id, (SELECT value FROM series WHERE realisation_id = r.id AND name = 'line_length' AND k = 0) AS L,
           (SELECT value FROM series WHERE realisation_id = r.id AND name = 'cluster_centre_x' AND k = 10)
           - (SELECT value FROM series WHERE realisation_id = r.id AND name = 'cluster_centre_x' AND k = 0) AS dx,
           (SELECT value FROM series WHERE realisation_id = r.id AND name = 'cluster_centre_y' AND k = 10)
           - (SELECT value FROM series WHERE realisation_id = r.id AND name = 'cluster_centre_y' AND k = 0) AS dy,
           (SELECT value FROM series WHERE realisation_id = r.id AND name = 'cluster_centre_z' AND k = 10)
           - (SELECT value FROM series WHERE realisation_id = r.id AND name = 'cluster_centre_z' AND k = 0) AS dz
         FROM realisations r WHERE r.status = 'done'`,
      ).all() as { L: number; dx: number; dy: number; dz: number }[];
      assert(rows.length === 6, `${rows.length} refined rings`);
      for (const r of rows) {
        const R = r.L / (2 * Math.PI);
        const U = Math.hypot(r.dx, r.dy, r.dz) / 1.0;
        assertClose(
          U,
          (1 / (4 * Math.PI * R)) * (Math.log((8 * R) / 1e-3) - beta),
          5e-3,
          "refined ring speed",
        );
      }
    } finally {
      audit.close();
    }
  } finally {
    await Deno.remove(resolved.dir, { recursive: true });
  }
  const coarse = await audited(rings("{ kind: ring, radius: 1.0 }", 1.0), { subset: 3 });
  try {
    const v = summaryOf(coarse.report);
    const L = v.comparisons.find((x) => x.quantity === "line_length")!;
    console.log(`δ = R: line length Δ ${L.difference.toPrecision(3)} of ${L.studyValue?.toPrecision(4)}`);
    assertEquals(v.status, "not-converged", v.reasons.join("; "));
    assert(L.flagged, "the line length of a 9-point ring moves by more than 1 % at δ/2");
  } finally {
    await Deno.remove(coarse.dir, { recursive: true });
  }
});
