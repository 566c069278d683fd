/**
 * Browser check of the report page: a small synthetic study database (rows written with SQL following
 * store/schema.ts, hostile text in every user string) → writeReport → headless Chromium → the DOM after the
 * scripts ran. Skipped, with a printed reason, when Chromium is not installed.
 */
import assert from "node:assert/strict";
import { syntheticStudy, writeFixtureDb } from "../reports/_fixture.ts";
import { writeReport } from "../reports/mod.ts";
import { dumpDom, findChromium, legendLabels } from "./_chromium.ts";

const chromium = findChromium();
const skipReason = "Chromium not found (looked at $SPINDRIFT_CHROMIUM, /usr/bin/chromium, …); " +
  "install it with 'apt-get install -y chromium' to run this test";
if (chromium === null) console.warn(`report_browser_test: SKIPPED — ${skipReason}`);

const CHARTS = ["msd", "cluster-rms-radius", "evaporated-count", "invariant-drift"];

function bodyAttr(dom: string, name: string): string | null {
  const body = /<body([^>]*)>/.exec(dom)?.[1] ?? "";
  return new RegExp(`\\s${name}="([^"]*)"`).exec(body)?.[1] ?? null;
}

Deno.test({
  name: chromium === null
    ? `report page renders in headless Chromium (SKIPPED: ${skipReason})`
    : "report page renders every chart in headless Chromium with no script errors and no injected markup; " +
      "nothing wider than the page at 1400 px and 420 px; legends drawn",
  ignore: chromium === null,
  fn: async () => {
    const dir = await Deno.makeTempDir({ prefix: "spindrift-browser-" });
    try {
      writeFixtureDb(`${dir}/film.sqlite`, syntheticStudy({ hostile: true }));
      const { html } = await writeReport(`${dir}/film.sqlite`, { out: `${dir}/report.html` });
      const { dom, consoleErrors } = await dumpDom(html, {
        chromium: chromium!,
        virtualTimeBudgetMs: 5000,
        width: 1400,
      });

      assert.equal(bodyAttr(dom, "data-charts"), String(CHARTS.length));
      assert.equal(bodyAttr(dom, "data-rendered"), String(CHARTS.length), "every view finished rendering");
      assert.equal(bodyAttr(dom, "data-state"), "ready");
      assert.equal(
        bodyAttr(dom, "data-errors"),
        "0",
        `page recorded errors: ${/id="page-errors"[^]*?<\/div>/.exec(dom)}`,
      );
      assert.deepEqual(consoleErrors, [], "Chromium console errors");
      // The hostile payloads would set data-pwned if any of them ran.
      assert.equal(bodyAttr(dom, "data-pwned"), null, "injected script ran");

      for (const id of CHARTS) {
        const start = dom.indexOf(`id="view-${id}"`);
        assert.ok(start >= 0, `container view-${id} present`);
        const end = dom.indexOf("</figure>", start);
        const inner = dom.slice(start, end);
        assert.match(inner, /<svg[^>]*class="marks"/, `view-${id} holds a rendered Vega SVG`);
        assert.match(inner, /<path /, `view-${id} draws marks`);
      }
      // Nothing wider than the page or cut by overflow, wide (1400 px) and narrow (420 px); legends name the
      // points in words.
      for (const width of [1400, 420]) {
        const at = width === 1400 ? dom : (await dumpDom(html, { chromium: chromium!, width })).dom;
        assert.equal(bodyAttr(at, "data-state"), "ready", `${width} px: ready`);
        assert.equal(
          bodyAttr(at, "data-overflow"),
          "0",
          `${width} px: ${bodyAttr(at, "data-overflow-list")}`,
        );
        for (const id of ["msd", "cluster-rms-radius", "evaporated-count"]) {
          const labels = legendLabels(at, id);
          assert.ok(labels.some((l) => l.startsWith("initial count = 32")), `${width} px ${id}: ${labels}`);
        }
      }
    } finally {
      await Deno.remove(dir, { recursive: true });
    }
  },
});
