import assert from "node:assert/strict";
import { syntheticStudy, tinyStudy, writeFixtureDb } from "./_fixture.ts";
import { checkWellFormedXml } from "./_testing.ts";
import { StoreReadError, writeReport } from "./mod.ts";
import { vegaRuntimePath } from "./render.ts";

async function withDir<T>(fn: (dir: string) => Promise<T>): Promise<T> {
  const dir = await Deno.makeTempDir();
  try {
    return await fn(dir);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
}

Deno.test("writeReport writes the page beside the database and one valid SVG and CSV per chart", async () => {
  await withDir(async (dir) => {
    writeFixtureDb(`${dir}/film.sqlite`, syntheticStudy());
    const { html, figuresDir: svgDir } = await writeReport(`${dir}/film.sqlite`, {
      units: { length: "ℓ", time: "ℓ²/κ" },
    });
    assert.equal(html, `${dir}/film-patch-report.html`);
    assert.equal(svgDir, `${dir}/film-patch-report-figures`);
    const page = await Deno.readTextFile(html);
    assert.match(page, /^<!doctype html>/);
    // The real Vega runtime is inlined (about 0.5 MB), so the page works offline.
    assert.ok(page.length > 400_000, `page is ${page.length} characters`);
    assert.ok(page.includes('href="film-patch-report-figures/msd.svg"'));
    assert.ok(page.includes('href="film-patch-report-figures/msd.csv"'));
    const all = [...Deno.readDirSync(svgDir)].map((e) => e.name).sort();
    const ids = ["cluster-rms-radius", "evaporated-count", "invariant-drift", "msd"];
    assert.deepEqual(all, ids.flatMap((id) => [`${id}.csv`, `${id}.svg`]));
    const files = all.filter((f) => f.endsWith(".svg"));
    for (const f of files) {
      const svg = await Deno.readTextFile(`${svgDir}/${f}`);
      // Well-formed XML with an <svg> root in the SVG namespace (W3C SVG 1.1 §5.1, XML 1.0 §2.1).
      assert.equal(checkWellFormedXml(svg), "svg", f);
      assert.match(svg, /^<svg xmlns="http:\/\/www\.w3\.org\/2000\/svg"[^>]* width="\d+" height="\d+"/, f);
      assert.match(svg, /<path /, `${f} draws marks`);
    }
    const msd = await Deno.readTextFile(`${svgDir}/msd.svg`);
    assert.ok(msd.includes("time t [ℓ²/κ]"), "axis title in the SVG");
    assert.ok(msd.includes("initial count = 64"), "legend label (the point's readable name) in the SVG");
    assert.ok(
      msd.includes("Mean-square displacement of main-cluster objects"),
      "title drawn into the figure",
    );
  });
});

Deno.test("writeReport is deterministic: same database and time stamp give the same page and SVGs", async () => {
  await withDir(async (dir) => {
    writeFixtureDb(`${dir}/film.sqlite`, syntheticStudy());
    const first = await writeReport(`${dir}/film.sqlite`, {
      out: `${dir}/a.html`,
      generatedAt: "2026-02-01T00:00:00Z",
    });
    const second = await writeReport(`${dir}/film.sqlite`, {
      out: `${dir}/b.html`,
      generatedAt: "2026-02-01T00:00:00Z",
    });
    const a = (await Deno.readTextFile(first.html)).replaceAll("a-figures", "X");
    const b = (await Deno.readTextFile(second.html)).replaceAll("b-figures", "X");
    assert.ok(a === b, "pages differ");
    for (const f of ["msd.svg", "msd.csv"]) {
      assert.equal(
        await Deno.readTextFile(`${dir}/a-figures/${f}`),
        await Deno.readTextFile(`${dir}/b-figures/${f}`),
      );
    }
  });
});

Deno.test("writeReport: an explicit study id names the page, a chart without data leaves no stale SVG", async () => {
  await withDir(async (dir) => {
    writeFixtureDb(`${dir}/t.sqlite`, tinyStudy());
    await Deno.mkdir(`${dir}/tiny-r1-report-figures`);
    await Deno.writeTextFile(`${dir}/tiny-r1-report-figures/cluster-rms-radius.svg`, "<svg/>");
    await Deno.writeTextFile(`${dir}/tiny-r1-report-figures/cluster-rms-radius.csv`, "t\n");
    const { html, figuresDir } = await writeReport(`${dir}/t.sqlite`, { studyId: 1 });
    assert.equal(html, `${dir}/tiny-r1-report.html`);
    const files = [...Deno.readDirSync(figuresDir)].map((e) => e.name).filter((f) => f.endsWith(".svg"))
      .sort();
    assert.deepEqual(files, ["evaporated-count.svg", "invariant-drift.svg", "msd.svg"]);
    assert.ok(![...Deno.readDirSync(figuresDir)].some((e) => e.name.startsWith("cluster-rms-radius")));
    await assert.rejects(
      () => writeReport(`${dir}/t.sqlite`, { studyId: 9 }),
      /no study with id 9; the database has ids 1/,
    );
  });
});

Deno.test("writeReport refuses a missing or foreign file with a StoreReadError", async () => {
  await withDir(async (dir) => {
    await assert.rejects(() => writeReport(`${dir}/missing.sqlite`), (e) => {
      assert.ok(e instanceof StoreReadError);
      assert.match(e.message, /database file not found: .*missing\.sqlite/);
      return true;
    });
    await Deno.writeTextFile(`${dir}/notes.txt`, "some notes, not a database ".repeat(100));
    await assert.rejects(() => writeReport(`${dir}/notes.txt`), StoreReadError);
  });
});

Deno.test("vegaRuntimePath finds vega.min.js of the imported vega package", () => {
  const path = vegaRuntimePath();
  assert.match(path, /vega\/build\/vega\.min\.js$/);
  assert.ok(Deno.statSync(path).size > 300_000);
});

Deno.test("checkWellFormedXml (the SVG check above) accepts well-formed XML and rejects broken markup", () => {
  assert.equal(
    checkWellFormedXml(`<?xml version="1.0"?><svg a="1" b='2'><g/><text>x &amp; y &#60;</text></svg>`),
    "svg",
  );
  for (
    const bad of [
      "<svg><g></svg>", // wrong nesting
      "<svg a=1></svg>", // unquoted attribute
      "<svg>a < b</svg>", // bare <
      "<svg>fish &chips</svg>", // bare &
      "<svg></svg><svg></svg>", // two roots
      "<svg>", // unclosed
    ]
  ) assert.throws(() => checkWellFormedXml(bad), /at offset/, bad);
});

Deno.test("writeReport: a study whose realisations all failed still gets a page (no charts, the failures)", async () => {
  await withDir(async (dir) => {
    const s = tinyStudy();
    writeFixtureDb(`${dir}/t.sqlite`, {
      ...s,
      points: [{
        ...s.points[0],
        realisations: s.points[0].realisations.filter((r) => r.status === "failed"),
      }],
    });
    const { html, figuresDir } = await writeReport(`${dir}/t.sqlite`);
    const page = await Deno.readTextFile(html);
    assert.match(page, /data-charts="0"/);
    assert.ok(page.includes("vortex 3 left the domain"));
    assert.deepEqual([...Deno.readDirSync(figuresDir)], []);
  });
});
