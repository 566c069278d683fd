/**
 * Browser checks of the analysis pages: two real studies (imported walkers, ballistic tracks) run through the
 * runner and analysed → the report page with its Answers section, and the compare page → headless Chromium →
 * the DOM after the scripts ran: every chart drawn, no script or console errors, and the numbers shown equal the
 * database's `ensemble_results`. Skipped, with a printed reason, when Chromium is not installed.
 */
import { assert, assertEquals } from "./_assert.ts";
import { ballisticDb, walkersDb } from "./_analysis_fixture.ts";
import { dumpDom, findChromium, legendLabels } from "./_chromium.ts";
import { analyseStudy } from "../analysis/mod.ts";
import { writeComparePage } from "../reports/compare.ts";
import { writeReport } from "../reports/mod.ts";
import { formatNumber } from "../reports/html.ts";
import { openStoreReadOnly, readStudy } from "../store/reads.ts";
import { readEnsembleResults } from "../store/ensemble.ts";

const chromium = findChromium();
const skipReason = "Chromium not found (looked at $SPINDRIFT_CHROMIUM, /usr/bin/chromium, …); " +
  "install it with 'apt-get install -y chromium' to run this test";
if (chromium === null) console.warn(`compare_browser_test: SKIPPED — ${skipReason}`);

function bodyAttr(dom: string, name: string): string | null {
  const body = /<body([^>]*)>/.exec(dom)?.[1] ?? "";
  return new RegExp(`\\s${name}="([^"]*)"`).exec(body)?.[1] ?? null;
}

function assertDrawn(dom: string, consoleErrors: readonly string[], ids: readonly string[]): void {
  const charts = bodyAttr(dom, "data-charts");
  assertEquals(bodyAttr(dom, "data-rendered"), charts, "every view finished rendering");
  assertEquals(bodyAttr(dom, "data-state"), "ready");
  assertEquals(bodyAttr(dom, "data-errors"), "0", `page errors: ${/id="page-errors"[^]*?<\/div>/.exec(dom)}`);
  assertEquals([...consoleErrors], [], "Chromium console errors");
  for (const id of ids) {
    const start = dom.indexOf(`id="view-${id}"`);
    assert(start >= 0, `container view-${id} present`);
    const inner = dom.slice(start, dom.indexOf("</figure>", start));
    assert(/<svg[^>]*class="marks"/.test(inner), `view-${id} holds a rendered Vega SVG`);
    assert(/<path /.test(inner), `view-${id} draws marks`);
  }
}

async function fixtures(dir: string): Promise<{ walkers: string; ballistic: string }> {
  const walkers = await walkersDb(dir);
  const ballistic = await ballisticDb(dir);
  await analyseStudy(walkers, {
    replicates: 500,
    vinenLoss: { mode: "fixed", chi2: 0 },
    vinenReplicates: 4,
    sensitivityReplicates: 0,
  });
  await analyseStudy(ballistic, { replicates: 100, sensitivityReplicates: 0 });
  return { walkers, ballistic };
}

Deno.test({
  name: chromium === null
    ? `analysis report and compare page render in headless Chromium (SKIPPED: ${skipReason})`
    : "analysis report and compare page: every chart renders in headless Chromium, numbers equal the database",
  ignore: chromium === null,
  fn: async () => {
    const dir = await Deno.makeTempDir({ prefix: "spindrift-compare-" });
    try {
      const { walkers, ballistic } = await fixtures(dir);

      // The study report with the Answers section.
      const { html } = await writeReport(walkers, { out: `${dir}/walkers.html` });
      const report = await dumpDom(html, { chromium: chromium!, virtualTimeBudgetMs: 5000 });
      assertDrawn(report.dom, report.consoleErrors, [
        "d-vs-parameter",
        "msd-fit",
        "local-slope",
        "lag-d",
        "vinen-fit",
      ]);

      // The analysis page fits the window, wide and narrow, and its charts explain their lines in legends.
      for (const width of [1400, 420]) {
        const { dom } = await dumpDom(html, { chromium: chromium!, virtualTimeBudgetMs: 5000, width });
        assertEquals(
          bodyAttr(dom, "data-overflow"),
          "0",
          `${width} px: ${bodyAttr(dom, "data-overflow-list")}`,
        );
      }
      const msdLegend = legendLabels(report.dom, "msd-fit");
      for (const entry of ["guide ∝ t² (ballistic)", "guide ∝ t (diffusive)", "ensemble MSD (survivors)"]) {
        assert(msdLegend.includes(entry), `msd-fit legend has "${entry}": ${msdLegend}`);
      }
      assert(
        legendLabels(report.dom, "d-vs-parameter").includes("answer (fixed cohort)"),
        "estimator legend",
      );

      // The compare page: both studies side by side; its D table equals the stored rows.
      const page = await writeComparePage([walkers, ballistic], { out: `${dir}/compare.html` });
      const cmp = await dumpDom(page.html, { chromium: chromium!, virtualTimeBudgetMs: 5000 });
      assertDrawn(cmp.dom, cmp.consoleErrors, [
        "compare-msd",
        "compare-rms-radius",
        "compare-evaporated",
        "compare-d",
      ]);
      assertEquals(bodyAttr(cmp.dom, "data-charts"), "4");
      assertEquals(bodyAttr(cmp.dom, "data-overflow"), "0", `${bodyAttr(cmp.dom, "data-overflow-list")}`);
      const db = openStoreReadOnly(walkers);
      const rows = readEnsembleResults(db, readStudy(db).id);
      db.close();
      const D = rows.find((r) => r.analysis === "diffusion" && r.name === "D")!;
      const row = /<tr data-study="imported-walkers"[^]*?<\/tr>/.exec(cmp.dom)?.[0] ?? "";
      const lost = rows.find((r) => r.analysis === "evaporation" && r.name === "lost_fraction")!;
      for (const v of [D.value!, D.lower!, D.upper!, lost.value!]) {
        assert(row.includes(`data-value="${v}">${formatNumber(v)}<`), `compare table shows ${v}`);
      }
      const brow = /<tr data-study="ballistic-tracks"[^]*?<\/tr>/.exec(cmp.dom)?.[0] ?? "";
      assert(brow.includes("no diffusive regime"), "ballistic study: no diffusive regime shown");
      const svg = await Deno.readTextFile(`${page.figuresDir}/compare-msd.svg`);
      assert(svg.startsWith("<svg"), "compare-msd.svg exported");
    } finally {
      await Deno.remove(dir, { recursive: true });
    }
  },
});
