import assert from "node:assert/strict";
import { DatabaseSync } from "node:sqlite";
import { syntheticStudy, writeFixtureDb } from "./_fixture.ts";
import { buildAnalysisSection } from "./analysis_section.ts";
import { aggregateStudy } from "./aggregate.ts";
import { formatNumber } from "./format.ts";
import { writeReport } from "./mod.ts";
import { compileChart } from "./render.ts";
import { openStoreReadOnly } from "../store/reads.ts";
import { readEnsembleResults } from "../store/ensemble.ts";

// deno-lint-ignore no-explicit-any
type Json = any;

/** κ of ⁴He in m²/s (docs/check-values.md §0). */
const KAPPA = 9.9693e-8;

/** The synthetic two-point study with the given units and a D answer at point 0, none at point 1. */
function studyWithAnswers(path: string, units: Record<string, string>, D: number): void {
  writeFixtureDb(path, syntheticStudy());
  const db = new DatabaseSync(path);
  db.prepare("UPDATE studies SET units_json = ?").run(JSON.stringify(units));
  const points = db.prepare("SELECT point_hash FROM study_points ORDER BY point_index").all() as {
    point_hash: string;
  }[];
  const ins = db.prepare(
    `INSERT INTO ensemble_results (study_id, point_hash, analysis, name, value, lower, upper, detail_json,
       computed_at) VALUES (1, ?, ?, ?, ?, ?, ?, ?, '2026-01-16T00:00:00Z')`,
  );
  ins.run(
    points[0].point_hash,
    "diffusion",
    "D",
    D,
    0.8 * D,
    1.25 * D,
    JSON.stringify({ status: "ok", realisations: 3, level: 0.95, support: 0.72, reasons: [], warnings: [] }),
  );
  const why = "displacements grow faster than the lag: exponent 1.3 [1.2, 1.4] over lags 1–5 (diffusion: 1)";
  ins.run(
    points[1].point_hash,
    "diffusion",
    "D",
    null,
    null,
    null,
    JSON.stringify({
      status: "no-diffusive-regime",
      reason: why,
      reasons: [why],
      realisations: 3,
      level: 0.95,
    }),
  );
  ins.run(
    points[0].point_hash,
    "vinen",
    "D",
    null,
    null,
    null,
    JSON.stringify({ status: "rejected", reducedChi2: 7.5, reason: "the model does not fit", kappa: KAPPA }),
  );
  db.close();
}

async function page(units: Record<string, string>, D: number): Promise<string> {
  const dir = await Deno.makeTempDir();
  try {
    studyWithAnswers(`${dir}/s.sqlite`, units, D);
    const { html } = await writeReport(`${dir}/s.sqlite`, { generatedAt: "2026-01-16T00:00:00Z" });
    return await Deno.readTextFile(html);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
}

function summaryOf(html: string): string {
  return /<section id="summary">[^]*?<\/section>/.exec(html)?.[0] ?? "";
}

Deno.test("summary: physical units show D/κ big (stored D over the recorded κ) and D in m²/s beside it", async () => {
  const D = 4.2e-8;
  const html = await page({ length: "m", time: "s", circulation: "m²/s", kappa: String(KAPPA) }, D);
  const summary = summaryOf(html);
  const card = /<div class="card" data-point="initial.count=32"[^]*?<\/div><\/div>/.exec(summary)?.[0] ?? "";
  // D/κ = 4.2e-8 / 9.9693e-8 = 0.42129…; the stored value stays in data-value, the shown one is divided by κ.
  assert.ok(card.includes(`data-value="${D}">${formatNumber(D / KAPPA)}<`), card);
  assert.ok(
    card.includes(`D = ${formatNumber(D)} [${formatNumber(0.8 * D)}, ${formatNumber(1.25 * D)}] m²/s`),
    card,
  );
  assert.ok(card.includes("ν′ = D/κ ="), "the big number is D/κ");
  // The other point: no regime and why, in one line, not a number.
  assert.ok(
    summary.includes("no diffusive regime") && summary.includes("displacements grow faster than the lag"),
  );
  // Caveats in words: no regime, rejected Vinen fit, low support, few realisations, the failed run.
  const caveats = /<div class="caveats"[^]*?<\/div>/.exec(summary)?.[0] ?? "";
  for (
    const text of [
      "No diffusive regime at initial count = 64",
      "Vinen-equation fit does not fit the profiles at initial count = 32 (reduced χ² 7.5",
      "Low window support at initial count = 32: only 72 %",
      "Few realisations",
      "realisation(s) failed",
    ]
  ) assert.ok(caveats.includes(text), `caveat: ${text}\n${caveats}`);
  // The units section on the page, and D headed with its unit in the answers table.
  const units = /<section id="units">[^]*?<\/section>/.exec(html)?.[0] ?? "";
  assert.ok(units.includes("lengths in m, times in s"), units);
  assert.ok(units.includes("κ = 9.9693e-8 m²/s (recorded with the study)"), units);
  assert.ok(html.includes("<th>D (m²/s), the answer [95 % CI]</th>"), "answers table headed D (m²/s)");
  assert.ok(html.includes(`<span class="dk">D/κ = ${formatNumber(D / KAPPA)}`), "D/κ beside D in the table");
  // The unfinished and failed realisations of the fixture are said too.
  assert.ok(summary.includes('id="run-unfinished"'), "unfinished banner");
});

Deno.test("summary: κ units show ν′ = D/κ with its interval; without a recorded κ physical units say so", async () => {
  const kappaUnits = summaryOf(await page({ length: "ℓ", time: "ℓ²/κ", circulation: "κ" }, 0.31));
  assert.ok(
    kappaUnits.includes(`ν′ = D/κ =</span> <span data-role="value" data-value="0.31">0.31<`),
    kappaUnits,
  );
  assert.ok(
    kappaUnits.includes(`[<span data-role="lower" data-value="${0.8 * 0.31}">${formatNumber(0.8 * 0.31)}<`),
  );
  // An older database: physical units, no κ recorded, and no analysis row that carries κ.
  const dir = await Deno.makeTempDir();
  try {
    studyWithAnswers(`${dir}/s.sqlite`, { length: "m", time: "s", circulation: "m²/s" }, 3e-8);
    const db = new DatabaseSync(`${dir}/s.sqlite`);
    db.exec("DELETE FROM ensemble_results WHERE analysis = 'vinen'");
    db.close();
    const { html } = await writeReport(`${dir}/s.sqlite`);
    const text = await Deno.readTextFile(html);
    assert.ok(summaryOf(text).includes("D/κ: κ was not recorded with this study"));
    assert.ok(text.includes("κ was not recorded with this study (a database written before this version)"));
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("velocity-correlation chart: one legend that shows both the colour and the dash of each curve", async () => {
  const dir = await Deno.makeTempDir();
  try {
    writeFixtureDb(`${dir}/s.sqlite`, syntheticStudy());
    const w = new DatabaseSync(`${dir}/s.sqlite`);
    const hash = (w.prepare("SELECT point_hash FROM study_points WHERE point_index = 0").get() as {
      point_hash: string;
    }).point_hash;
    const r = [0.1, 0.2, 0.3, 0.4];
    w.prepare(
      `INSERT INTO ensemble_results (study_id, point_hash, analysis, name, value, detail_json, computed_at)
       VALUES (1, ?, 'correlations', 'f_integral', 0.4, ?, 'now')`,
    ).run(
      hash,
      JSON.stringify({ rMean: r, f: [1, 0.8, 0.5, 0.2], g: [0.9, 0.3, -0.1, -0.2], fFromG: { r, f: r } }),
    );
    w.close();
    const db = openStoreReadOnly(`${dir}/s.sqlite`);
    const agg = aggregateStudy(db);
    const section = buildAnalysisSection(agg, readEnsembleResults(db, 1));
    db.close();
    const corr = section.charts.find((c) => c.id === "velocity-correlations")!;
    assert.ok(corr.spec !== null);
    const { vega, warnings } = compileChart(corr.spec);
    assert.deepEqual(warnings, []);
    const legends = (vega as Json).legends ?? [];
    assert.equal(legends.length, 1, "colour and dash merged into one legend");
    assert.ok(legends[0].stroke && legends[0].strokeDash, JSON.stringify(legends[0]));
    assert.equal(legends[0].title, "curve");
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});
