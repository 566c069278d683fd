/**
 * End to end: real studies run through study/runner.ts → `analyseStudy` → rows in `ensemble_results` → the report
 * page and `spindrift query`/`analyse` on the command line.
 *
 * Known answers: the imported walkers have D = 0.25 (Ornstein–Uhlenbeck velocity, τ = 0.1; Uhlenbeck & Ornstein,
 * Phys. Rev. 36, 823 (1930); data from test/imported/make_walkers.ts); the ballistic tracks have MSD ∝ t² at all
 * times (constant velocities), so there is no diffusive regime.
 */
import { assert, assertClose, assertEquals } from "./_assert.ts";
import { ballisticDb, walkersDb } from "./_analysis_fixture.ts";
import { loadNormalizedForTest, REPO, runForTest } from "./_study.ts";
import { analyseStudy } from "../analysis/mod.ts";
import { chi2FromDecayStudy } from "../analysis/mod.ts";
import { openStoreReadOnly, readAlignedSeries, readRealisations, readStudy } from "../store/reads.ts";
import { type EnsembleResult, readEnsembleResults } from "../store/ensemble.ts";
import { writeReport } from "../reports/mod.ts";
import { fitDiffusion } from "../analysis/estimators/msd_fit.ts";
import { escapeHtml, formatNumber } from "../reports/html.ts";
import { runQuery } from "../cli/query.ts";
import { WALKERS } from "./imported/make_walkers.ts";

const dir = Deno.makeTempDirSync({ prefix: "spindrift-analysis-" });
const fixtures = (async () => ({ walkers: await walkersDb(dir), ballistic: await ballisticDb(dir) }))();

function rowsOf(dbPath: string): EnsembleResult[] {
  const db = openStoreReadOnly(dbPath);
  try {
    return readEnsembleResults(db, readStudy(db).id);
  } finally {
    db.close();
  }
}

function find(rows: readonly EnsembleResult[], analysis: string, name: string): EnsembleResult {
  const r = rows.find((x) => x.analysis === analysis && x.name === name);
  if (!r) throw new Error(`no row ${analysis}/${name}`);
  return r;
}

const OPTIONS = {
  replicates: 2000,
  vinenLoss: { mode: "fixed", chi2: 0 } as const,
  vinenReplicates: 4,
  sensitivityReplicates: 20,
  workers: 1,
};

Deno.test("analyseStudy: imported walkers are diffusive by every estimator and recover D within the stored 95 % interval; rows reproducible", async () => {
  const { walkers } = await fixtures;
  const summary = await analyseStudy(walkers, OPTIONS);
  assertEquals(summary.points.length, 1);
  const rows = rowsOf(walkers);
  const D = find(rows, "diffusion", "D");
  assertEquals(D.detail.status, "ok", String(D.detail.reason));
  // Known answer D = 0.25 (make_walkers.ts, Uhlenbeck & Ornstein 1930). The estimators use pairwise relative
  // displacements, unbiased for independent walkers (no (1 − 1/N) factor; elementary statistics), so the
  // interval must contain 0.25 itself.
  const expected = WALKERS.diffusion;
  assert(D.lower! <= expected && expected <= D.upper!, `${expected} in [${D.lower}, ${D.upper}]`);
  // Point estimate within 10 % (24 × 20 walkers: relative sd ≈ 5 %; common practice, no source).
  assertClose(D.value!, expected, 0.10, "D");
  const study = readStudy(openStoreReadOnly(walkers));
  assert(String(D.detail.seed).startsWith(`${study.studyHash}/`), "seed derived from the study hash");
  assertEquals(D.detail.replicates, 2000);
  assertEquals(D.detail.realisations, WALKERS.realisations);
  // Every estimator's window-mean exponent is consistent with diffusion (Einstein 1905: MSD ∝ t).
  for (const name of ["D_origin", "D_cohort", "D_lag"]) {
    const e = find(rows, "diffusion", name);
    const ex = e.detail.exponent as { value: number; pass: boolean };
    assert(ex.pass && ex.value > 0.85 && ex.value < 1.15, `${name}: exponent ${ex.value}`);
    assert(e.lower! <= expected && expected <= e.upper!, `${name}: ${expected} in [${e.lower}, ${e.upper}]`);
  }
  // τ_c: α(t) of 4D[t − τ(1 − e^{−t/τ})] drops below 1.2 near t ≈ 5.9τ (derived from the OU law; loose bound).
  const tauC = find(rows, "diffusion", "tau_c").value!;
  assert(tauC > 0.1 && tauC < 1.5, `τ_c = ${tauC}`);
  const w1 = find(rows, "diffusion", "window_start").value!,
    w2 = find(rows, "diffusion", "window_end").value!;
  assert(w1 >= 3 * tauC * (1 - 1e-9) && w2 / w1 >= 5, `window [${w1}, ${w2}] follows the rules`);
  // D_R from the cohort's spread: walkers start in a cloud and spread by 2dDt, so D_R ≈ D.
  const DR = find(rows, "diffusion", "D_R");
  assert(DR.value! > 0.15 && DR.value! < 0.35, `D_R = ${DR.value}`);
  const support = find(rows, "diffusion", "support").value!;
  assert(support > 0 && support <= 1, `support ${support}`);
  // Sensitivity: base + 5 thresholds × 2 = 11 rows; the replay of stored frames reproduces the stored labels.
  const sens = rows.filter((r) => r.analysis === "sensitivity");
  assertEquals(sens.length, 11);
  assertEquals(find(rows, "sensitivity", "base").detail.matchesStored, true);
  // Vinen fit with χ₂ fixed at 0 (free walkers: pure diffusion of their density): a D with an interval.
  const V = find(rows, "vinen", "D");
  assert(V.detail.reducedChi2 !== null, "reduced χ² stored");
  assertEquals(rows.filter((r) => r.analysis === "vinen").length, 5);
  // Evaporation rows: free walkers leave no dipoles and no walker is lost (imported tracks keep every id).
  assertEquals(find(rows, "evaporation", "evaporated").value, 0);
  assertEquals(find(rows, "evaporation", "rate").value, 0);
  assertEquals(find(rows, "evaporation", "lost_fraction").value, 0);
  // Imported tracks carry no velocity field: stored as not available, with the reason.
  const C = find(rows, "correlations", "f_integral");
  assertEquals([C.value, C.detail.status], [null, "not-available"]);
  assert(String(C.detail.reason).includes("imported-tracks-2d"));
  // One point: no question rows.
  assertEquals(rows.filter((r) => r.analysis === "question").length, 0);
  // Rerun with the same options (and in a worker): the same numbers (recorded seeds), rows replaced.
  await analyseStudy(walkers, { ...OPTIONS, workers: 2 });
  const again = rowsOf(walkers);
  assertEquals(again.length, rows.length);
  assertEquals(
    again.map((r) => [r.analysis, r.name, r.value, r.lower, r.upper]),
    rows.map((r) => [r.analysis, r.name, r.value, r.lower, r.upper]),
  );
});

Deno.test("analyseStudy: ballistic tracks store 'no diffusive regime' with the reason instead of a number", async () => {
  const { ballistic } = await fixtures;
  const summary = await analyseStudy(ballistic, { replicates: 200, workers: 1 });
  assertEquals(summary.points[0].diffusion.status, "no-diffusive-regime");
  const rows = rowsOf(ballistic);
  const D = find(rows, "diffusion", "D");
  assertEquals([D.value, D.lower, D.upper], [null, null, null]);
  assertEquals(D.detail.status, "no-diffusive-regime");
  // MSD ∝ t²: the local slope stays at 2, so the crossover α < 1.2 never happens (docs/methods.md §5.1).
  assert(String(D.detail.reason).includes("never falls below 1.2"), String(D.detail.reason));
  assertEquals(find(rows, "diffusion", "D_R").value, null);
  assertEquals(rows.filter((r) => r.analysis === "sensitivity").length, 11);
});

Deno.test("report: the Answers section shows exactly the numbers stored in ensemble_results", async () => {
  const { walkers } = await fixtures;
  if (rowsOf(walkers).length === 0) await analyseStudy(walkers, OPTIONS);
  const rows = rowsOf(walkers);
  const { html } = await writeReport(walkers, { out: `${dir}/walkers-report.html` });
  const page = await Deno.readTextFile(html);
  const table = /<table class="analysis" id="diffusion-table">[^]*?<\/table>/.exec(page)?.[0] ?? "";
  const evidence = /<table class="analysis" id="evidence-table">[^]*?<\/table>/.exec(page)?.[0] ?? "";
  assert(table.length > 0 && evidence.length > 0, "diffusion and evidence tables present");
  for (
    const [field, analysis, name, where] of [
      ["diffusion-D", "diffusion", "D", table],
      ["evidence-D_origin", "diffusion", "D_origin", evidence],
      ["evidence-D_lag", "diffusion", "D_lag", evidence],
    ]
  ) {
    const r = find(rows, analysis, name);
    const cell = new RegExp(`<td data-field="${field}">([^]*?)</td>`).exec(where)?.[1] ?? "";
    for (const [role, v] of [["value", r.value], ["lower", r.lower], ["upper", r.upper]] as const) {
      const m = new RegExp(`data-role="${role}" data-value="([^"]+)">([^<]+)<`).exec(cell);
      assert(m, `${field} ${role} shown`);
      assertEquals(Number(m[1]), v, `${field} ${role}: data-value equals the database`);
      assertEquals(m[2], formatNumber(v!), `${field} ${role}: shown text`);
    }
  }
  // The answer first: the summary at the top of the page shows D/κ big with its interval, the stored numbers.
  const head = /<section id="summary">[^]*?<\/section>/.exec(page)?.[0] ?? "";
  const answer = find(rows, "diffusion", "D");
  assert(head.includes("ν′ = D/κ ="), head);
  for (
    const [role, v] of [["value", answer.value!], ["lower", answer.lower!], ["upper", answer.upper!]] as const
  ) {
    assert(head.includes(`data-role="${role}" data-value="${v}">${formatNumber(v)}<`), `summary ${role}`);
  }
  assert(page.indexOf('id="summary"') < page.indexOf('id="answers"'), "summary before the evidence");
  assert(
    page.indexOf('id="answer-headline"') < page.indexOf('id="parameters"'),
    "answer before the parameters",
  );
  for (const name of ["tau_c", "window_start", "window_end"]) {
    const v = find(rows, "diffusion", name).value!;
    assert(table.includes(`data-value="${v}">${formatNumber(v)}<`), `${name} = ${v} shown`);
  }
  // Support and loss are fractions, shown in %.
  for (const name of ["support", "loss_in_window"]) {
    const v = find(rows, "diffusion", name).value!;
    assert(table.includes(`data-value="${v}">${formatNumber(100 * v)} %<`), `${name} = ${v} shown in %`);
  }
  // Evaporation and losses: the table shows the stored values.
  const evTable = /<table class="analysis" id="evaporation-table">[^]*?<\/table>/.exec(page)?.[0] ?? "";
  for (const [field, name] of [["evaporated", "evaporated"], ["lost-fraction", "lost_fraction"]]) {
    const r = find(rows, "evaporation", name);
    const cell = new RegExp(`<td data-field="${field}">([^]*?)</td>`).exec(evTable)?.[1] ?? "";
    assertEquals(Number(/data-role="value" data-value="([^"]+)"/.exec(cell)?.[1]), r.value, `${field} shown`);
  }
  // The fit's warnings are shown beside the answer, one each.
  const warnings = find(rows, "diffusion", "D").detail.warnings as string[];
  assertEquals((table.match(/warning: /g) ?? []).length, warnings.length, "one line per warning");
  for (const w of warnings) assert(table.includes(`warning: ${escapeHtml(w)}`), `warning shown: ${w}`);
  // A point without a diffusive regime shows every reason instead of a number (the 4-realisation ballistic study).
  const { ballistic } = await fixtures;
  if (rowsOf(ballistic).length === 0) await analyseStudy(ballistic, OPTIONS);
  const bRow = find(rowsOf(ballistic), "diffusion", "D");
  const bPage = await Deno.readTextFile(
    (await writeReport(ballistic, { out: `${dir}/ballistic-report.html` })).html,
  );
  assert(bPage.includes('data-status="no-diffusive-regime"'), "no diffusive regime shown");
  for (const r of bRow.detail.reasons as string[]) {
    assert(bPage.includes(escapeHtml(r)), `reason shown: ${r}`);
  }
  const sens = /<table class="analysis" id="sensitivity-table">[^]*?<\/table>/.exec(page)?.[0] ?? "";
  for (const r of rows.filter((x) => x.analysis === "sensitivity" && x.value !== null)) {
    assert(sens.includes(`data-value="${r.value}"`), `sensitivity ${r.name} shown`);
  }
  for (const id of ["d-vs-parameter", "msd-fit", "local-slope", "lag-d", "vinen-fit"]) {
    assert(page.includes(`id="view-${id}" class`) || page.includes(`<div class="view" id="view-${id}">`), id);
    const svg = await Deno.readTextFile(`${dir}/walkers-report-figures/${id}.svg`);
    assert(svg.startsWith("<svg"), `${id}.svg exported`);
  }
});

Deno.test("query: spindrift query reaches the ensemble rows", async () => {
  const { walkers } = await fixtures;
  const out = JSON.parse(
    await runQuery(
      walkers,
      "SELECT analysis, name, value, lower, upper FROM ensemble_results WHERE analysis = 'diffusion' AND name = 'D'",
      "json",
    ),
  ) as { value: number; lower: number; upper: number }[];
  assertEquals(out.length, 1);
  assertEquals(out[0].value, find(rowsOf(walkers), "diffusion", "D").value);
});

const DENO = Deno.execPath();

async function cli(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  const out = await new Deno.Command(DENO, {
    args: ["run", "--quiet", "--no-prompt", "--allow-all", `${REPO}cli/main.ts`, ...args],
    cwd: REPO,
    stdout: "piped",
    stderr: "piped",
    env: { DENO_NO_UPDATE_CHECK: "1", NO_COLOR: "1" },
  }).output();
  const dec = new TextDecoder();
  return { code: out.code, stdout: dec.decode(out.stdout), stderr: dec.decode(out.stderr) };
}

Deno.test("cli: analyse prints the reason for no diffusive regime; bad values get one line, no stack trace", async () => {
  const { ballistic } = await fixtures;
  const ok = await cli(["analyse", ballistic, "-B", "100", "--no-sensitivity"]);
  assertEquals(ok.code, 0, ok.stderr);
  assert(ok.stdout.includes("no diffusive regime"), ok.stdout);
  assert(ok.stdout.includes("why: no fitting window: α(t) never falls below 1.2"), ok.stdout);
  assert(ok.stdout.includes("rows stored in ensemble_results"), ok.stdout);
  const bad = await cli(["analyse", ballistic, "--chi2", "abc"]);
  assertEquals(bad.code, 1);
  assert(bad.stderr.includes("--chi2 must be a number"), bad.stderr);
  assert(!/\n\s+at .+:\d+:\d+/.test(bad.stderr), bad.stderr);
  const missing = await cli(["analyse", `${dir}/nope.sqlite`]);
  assertEquals(missing.code, 1);
  assert(missing.stderr.includes("does not exist"), missing.stderr);
});

Deno.test("report: without stored analysis the page says to run spindrift analyse", async () => {
  const { ballistic } = await fixtures;
  const fresh = `${dir}/fresh.sqlite`;
  await Deno.copyFile(ballistic, fresh);
  const db = new (await import("node:sqlite")).DatabaseSync(fresh);
  db.exec("DELETE FROM ensemble_results");
  db.close();
  const { html } = await writeReport(fresh, { out: `${dir}/fresh.html` });
  const page = await Deno.readTextFile(html);
  assert(page.includes('id="analysis-missing"') && page.includes("spindrift analyse"), "note present");
});

// The demo study under the loss-aware rule. An independent re-analysis found that the demo's "diffusive window"
// is made by censoring: the survivor average from t₀ is linear because the far, fast vortices leave it, while a
// fixed cohort and lag increments grow faster than linearly. This test checks that the analysis now says so,
// with its evidence, that the old survivor-average fit on the stored series alone still returns a number (the
// trap), that the Vinen fit is rejected by its own goodness of fit, and that the question is not answered with
// a D. The test runs the demo's two studies itself (examples/film-decay.yaml for χ₂, then
// examples/film-patch.yaml: about 55 s on 2 cores); SPINDRIFT_DEMO_DIR=folder reuses the databases
// `spindrift demo` wrote there instead.
const demoDir = Deno.env.get("SPINDRIFT_DEMO_DIR");
Deno.test("demo study: no diffusive regime (cohort and lag exponents above the band) although the survivor-average fit alone returns a number; Vinen fit rejected; question not answerable with D", async () => {
  const db = `${dir}/demo.sqlite`;
  const decayDb = `${dir}/demo-decay.sqlite`;
  if (demoDir !== undefined) {
    await Deno.copyFile(`${demoDir}/film-patch.sqlite`, db);
    await Deno.copyFile(`${demoDir}/film-decay.sqlite`, decayDb);
  } else {
    await runForTest(await loadNormalizedForTest(`${REPO}examples/film-decay.yaml`), decayDb, 2);
    await runForTest(await loadNormalizedForTest(`${REPO}examples/film-patch.yaml`), db, 2);
  }
  const chi2 = chi2FromDecayStudy(decayDb, { replicates: 500 });
  // Vinen free decay 1/n = 1/n₀ + χ₂κt/2π (Vinen 1957): χ₂ positive with an interval.
  assert(chi2.chi2 > 0 && chi2.interval !== null && chi2.interval[0] > 0, chi2.source);
  const sigma = (chi2.interval![1] - chi2.interval![0]) / (2 * 1.959964);
  const s = await analyseStudy(db, {
    replicates: 1000,
    vinenLoss: { mode: "prior", chi2: chi2.chi2, sigma },
    chi2Source: chi2.provenance,
    vinenReplicates: 40,
    sensitivity: false,
    correlations: false,
  });
  assertEquals(s.points.length, 2);
  const rows = rowsOf(db);
  for (const p of s.points) {
    const d = p.diffusion;
    assertEquals(d.status, "no-diffusive-regime", `${p.label}: ${d.reasons.join("; ")}`);
    assertEquals(d.value, null);
    assert(d.window !== null, `${p.label}: a window exists (only the evidence fails)`);
    const ex = Object.fromEntries(d.estimators.map((e) => [e.name, e.exponent]));
    // The survivor average alone looks diffusive (that is what fooled the old rule) …
    assert(
      ex.origin!.value > 0.85 && ex.origin!.value < 1.15,
      `${p.label}: origin exponent ${ex.origin!.value}`,
    );
    // … but lag increments grow faster than the lag, beyond their bootstrap noise (Einstein 1905: diffusion
    // has exponent 1 at every lag).
    assert(
      ex.lag!.lower! > 1.15,
      `${p.label}: lag exponent ${ex.lag!.value} [${ex.lag!.lower}, ${ex.lag!.upper}]`,
    );
    assert(d.reasons.some((r) => r.includes("displacements grow faster than the lag")), d.reasons.join("; "));
    // The old estimator (survivor-average series with the pointwise band) returns a number on the same data.
    const ro = openStoreReadOnly(db);
    const seed = readStudy(ro).seed;
    const ids = readRealisations(ro, p.pointHash, { seed }).filter((r) => r.status === "done").map((r) =>
      r.id
    );
    const msd = readAlignedSeries(ro, ids, "msd");
    ro.close();
    const old = fitDiffusion({ t: Float64Array.from(msd.t, (x) => x - msd.t[0]), msd: msd.values }, {
      dimension: 2,
      seed: "old-rule",
      replicates: 0,
    });
    assertEquals(old.status, "ok", `${p.label}: the survivor-average fit alone: ${old.reason}`);
    assert(old.D! > 0.1, `${p.label}: old D = ${old.D}`);
    // The Vinen fit with the decay study's χ₂ as a prior: rejected by its own reduced χ² (> 2).
    assertEquals(p.vinen.status, "rejected", `${p.label}: ${p.vinen.reason}`);
    assert(
      p.vinen.reducedChi2! > 2 && p.vinen.value === null,
      `${p.label}: reduced χ² ${p.vinen.reducedChi2}`,
    );
    // Losses: with friction, dipoles shrink and annihilate (d² = d₀² − 2ακt/π, docs/methods.md §1.7), so part of
    // the patch is gone by the end; the evaporated count is a non-negative mean with an interval.
    const ev = p.evaporation;
    assertEquals(ev.status, "ok", `${p.label}: ${ev.reason}`);
    assert(ev.lostFraction!.value! > 0 && ev.lostFraction!.value! < 1, `${p.label}: lost fraction`);
    assert(ev.evaporated!.value! >= 0 && ev.evaporated!.interval !== null, `${p.label}: evaporated count`);
  }
  assert(s.question.some((q) => q.includes("not answerable with D")), s.question.join("\n"));
  const chi2Row = find(rows, "vinen", "chi2");
  const src = chi2Row.detail.chi2Source as { kind: string; path: string; studyHash: string };
  assertEquals([src.kind, src.path], ["decay-study", decayDb], "χ₂ provenance stored");
  assertEquals(src.studyHash, readStudy(openStoreReadOnly(decayDb)).studyHash);
});

addEventListener("unload", () => {
  try {
    Deno.removeSync(dir, { recursive: true });
  } catch {
    // already gone
  }
});
