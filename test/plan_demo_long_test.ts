/**
 * The planning tools on the demo study itself (SPINDRIFT_LONG=1; about 5–8 minutes on 2 shared cores): a pilot of
 * the film-patch demo projects the 95 % half-widths at the demo's 64 realisations and the time of the rest of
 * the run; the demo is then run to the end and analysed, and the projections are compared with what the run
 * actually gives; finally the default numerical audit runs and its cost relative to the study is printed.
 *
 * What is measured: for each point and each end-of-run quantity (evaporated vortices, cluster radius, vortices
 * left, MSD at the end) the pilot's projected half-width t_{0.975,63}·s_pilot/8 against (a) the half-width of
 * the Student t interval of the 64 realisations, and (b) for the evaporation count also the bootstrap interval
 * `analyse` stores. The demo has no diffusive regime, so D is not projected (the pilot says so). The pilot uses
 * 16 of the 64 realisations: a standard deviation from n values has a relative standard error of about
 * 1/√(2(n − 1)), 27 % for n = 8 but 18 % for n = 16, so only the larger pilot can be expected to land within
 * 30 % (chosen before running). The check of the issue is on the evaporation count; the others are printed.
 */
import { runPilot } from "../credibility/pilot.ts";
import { runAudit } from "../credibility/audit.ts";
import { analyseStudy, readQuantities } from "../analysis/mod.ts";
import { meanAndSd, projectedHalfWidth } from "../analysis/estimators/mod.ts";
import { createProgress } from "../study/progress.ts";
import { loadNormalizedForTest, REPO, runForTest } from "./_study.ts";
import { tempDir } from "./_tmp.ts";
import { openStoreReadOnly, readRealisations } from "../store/reads.ts";
import { assert } from "./_assert.ts";

const LONG = Deno.env.get("SPINDRIFT_LONG") === "1";
const PROV = { toolVersion: "test", denoVersion: Deno.version.deno, gitCommit: null };

Deno.test({
  name:
    "pilot of the demo study: projected half-widths within 30 % of the real run's; time estimate (SPINDRIFT_LONG)",
  ignore: !LONG,
  async fn() {
    const dir = tempDir("demo-plan-");
    try {
      const study = await loadNormalizedForTest(`${REPO}examples/film-patch.yaml`);
      const db = `${dir}/film-patch.sqlite`;
      const pilot = await runPilot(study, {
        dbPath: db,
        workers: 2,
        realisations: 16,
        provenance: PROV,
        progress: createProgress({ quiet: true }),
      });
      assert(!pilot.interrupted);
      const e = pilot.estimate;
      const t0 = performance.now();
      await runForTest(study, db, 2);
      const actualWall = (performance.now() - t0) / 1000;
      console.log(
        `time of the rest (${e.totals.remaining} realisations, 2 workers): projected ${
          e.totals.wallSeconds.toFixed(1)
        } s at the pilot's load (${e.totals.idleWallSeconds.toFixed(1)} s idle), actual ${
          actualWall.toFixed(1)
        } s (actual/projected ${(actualWall / e.totals.wallSeconds).toFixed(2)})`,
      );
      const summary = await analyseStudy(db, { sensitivity: false, correlations: false, vinenReplicates: 0 });
      const read = openStoreReadOnly(db);
      try {
        for (const p of e.points) {
          const ids = readRealisations(read, p.pointHash, { seed: study.seed }).filter((r) =>
            r.status === "done"
          )
            .map((r) => r.id);
          const values = readQuantities(read, ids, [
            "evaporated",
            "cluster_radius",
            "vortex_count",
            "msd_final",
          ]);
          for (const r of p.results.filter((x) => x.status === "ok" && x.name in values)) {
            const all = meanAndSd(values[r.name]);
            const actual = projectedHalfWidth(all.sd, all.n);
            const projected = r.curve.find((c) => c.N === 64)!.halfWidth;
            const ratio = projected / actual;
            console.log(
              `${p.label} ${r.name}: projected ±${projected.toPrecision(3)} (pilot sd ${
                r.sd.toPrecision(3)
              }), ` +
                `actual ±${actual.toPrecision(3)} (sd ${all.sd.toPrecision(3)}, n ${all.n}): ratio ${
                  ratio.toFixed(2)
                }`,
            );
            if (r.name === "evaporated") {
              const ev = summary.points.find((x) => x.pointHash === p.pointHash)!.evaporation.evaporated!;
              const boot = (ev.interval!.upper - ev.interval!.lower) / 2;
              console.log(
                `  analyse's bootstrap half-width ±${boot.toPrecision(3)}: ratio ${
                  (projected / boot).toFixed(2)
                }`,
              );
              assert(Math.abs(ratio - 1) <= 0.3, `${p.label}: projected/actual half-width ${ratio}`);
            }
          }
          const d = p.results.find((x) => x.name === "D")!;
          console.log(`${p.label} D: ${d.reason}`);
        }
      } finally {
        read.close();
      }
      const audit = await runAudit(db, {
        workers: 2,
        provenance: PROV,
        progress: createProgress({ quiet: true }),
      });
      for (const p of audit.points) {
        for (const v of p.variants) {
          console.log(
            `audit ${p.label} ${v.variant}: ${v.status}, ${v.subset.length} pairs; ${v.reasons.join(" | ")}`,
          );
          assert(v.status !== "not-converged", `the demo's numerics are flagged at ${p.label}`);
        }
      }
      console.log(
        `audit cost: ${audit.wallAudit.toFixed(1)} s of reruns for ${
          audit.wallStudy.toFixed(1)
        } s of study ` +
          `(${(100 * audit.wallAudit / audit.wallStudy).toFixed(0)} %); ${audit.notes.join(" | ")}`,
      );
    } finally {
      await Deno.remove(dir, { recursive: true });
    }
  },
});
