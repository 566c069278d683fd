/**
 * Long physics run (SPINDRIFT_LONG=1): a reduced copy of the 3D example study examples/cloud-spread.yaml
 * (ball radius 5ℓ instead of 8ℓ, t = 10 instead of 90, 4 realisations), run through the runner and the
 * current analysis (`analyseStudy`, as `spindrift analyse`). It checks what must hold whatever the physics
 * turns out to be: every realisation finishes; the run-time accuracy check of the FMM stays within its
 * tolerance (99th percentile of |Δv|/v_rms ≤ 1e-3, docs/methods.md §2.9); the analysis reports either D/κ with an
 * interval or "no diffusive regime" with its reason. The numbers are printed for the notes.
 */
import { assert, assertEquals } from "./_assert.ts";
import { normalizeText, runForTest } from "./_study.ts";
import { analyseStudy } from "../analysis/mod.ts";
import { tempDir } from "./_tmp.ts";
import { openStoreReadOnly, readStudy } from "../store/reads.ts";
import { readEnsembleResults } from "../store/ensemble.ts";

const LONG = Deno.env.get("SPINDRIFT_LONG") === "1";

Deno.test({
  name:
    "cloud-spread example (reduced: radius 5ℓ, t = 10, 4 realisations) runs, stays accurate and is analysed",
  ignore: !LONG,
  async fn() {
    const text = Deno.readTextFileSync(new URL("../examples/cloud-spread.yaml", import.meta.url))
      .replace("cloudRadius: 8.0", "cloudRadius: 5.0")
      .replace("duration: 90.0", "duration: 10.0")
      .replace("sampleInterval: 1.5", "sampleInterval: 0.5")
      .replace("realisations: 20", "realisations: 4");
    const study = normalizeText(text, "cloud-spread-reduced.yaml");
    const dir = tempDir("spindrift-cloud-");
    const db = `${dir}/cloud.sqlite`;
    const t0 = performance.now();
    const report = await runForTest(study, db, 2);
    const wall = (performance.now() - t0) / 1000;
    assertEquals(report.failed, 0, "failed realisations");
    const store = openStoreReadOnly(db);
    const scalars = store.prepare(
      "SELECT r.idx AS k, s.name, s.value FROM scalars s JOIN realisations r ON r.id = s.realisation_id " +
        "WHERE s.name IN ('velocity_error_p99', 'final_points', 'initial_points', 'steps', 'reconnections', " +
        "'evaporated_final', 'initial_rms_radius') ORDER BY r.idx, s.name",
    ).all() as { k: number; name: string; value: number }[];
    const byReal = new Map<number, Record<string, number>>();
    for (const r of scalars) byReal.set(r.k, { ...(byReal.get(r.k) ?? {}), [r.name]: r.value });
    console.log(
      `reduced cloud-spread: ${report.completed} realisations in ${wall.toFixed(0)} s wall (2 workers)`,
    );
    for (const [k, v] of byReal) console.log(`  realisation ${k}: ${JSON.stringify(v)}`);
    for (const [k, v] of byReal) {
      assert(v.velocity_error_p99 <= 1e-3, `realisation ${k}: sampled FMM p99 ${v.velocity_error_p99}`);
    }
    await analyseStudy(db, { replicates: 500, sensitivity: false, vinenReplicates: 4 });
    const rows = readEnsembleResults(store, readStudy(store).id);
    store.close();
    const fit = rows.find((r) => r.analysis === "diffusion" && r.name === "D");
    assert(fit !== undefined, "a diffusion row");
    console.log(
      `diffusion: status ${fit.detail.status}, D/κ = ${fit.value} [${fit.lower}, ${fit.upper}], reason: ${
        fit.detail.reason ?? "—"
      }`,
    );
    for (const r of rows.filter((r) => ["evaporation", "diffusion"].includes(r.analysis))) {
      console.log(`  ${r.analysis}/${r.name}: ${r.value} [${r.lower}, ${r.upper}]`);
    }
    assert(
      fit.detail.status === "ok"
        ? fit.lower !== null && fit.upper !== null
        : typeof fit.detail.reason === "string",
      `a D with an interval, or a reason: ${JSON.stringify(fit.detail)}`,
    );
  },
});
