import assert from "node:assert/strict";
import { aggregateOf, syntheticStudy } from "./_fixture.ts";
import { checkWellFormedXml } from "./_testing.ts";
import { chartCsv, figureSpec, writeFigures } from "./figures.ts";
import { svgToPng } from "./png.ts";
import { buildCharts } from "./specs.ts";

// deno-lint-ignore no-explicit-any
type Json = any;

/** Width and height from a PNG's IHDR chunk (PNG specification, ISO/IEC 15948 §11.2.2). */
function pngSize(png: Uint8Array): { width: number; height: number } {
  const sig = [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a];
  assert.deepEqual([...png.subarray(0, 8)], sig, "PNG signature");
  assert.equal(new TextDecoder().decode(png.subarray(12, 16)), "IHDR");
  const v = new DataView(png.buffer, png.byteOffset);
  return { width: v.getUint32(16), height: v.getUint32(20) };
}

function svgSize(svg: string): { width: number; height: number } {
  const m = /<svg[^>]* width="(\d+)" height="(\d+)"/.exec(svg);
  assert.ok(m, "svg has width and height");
  return { width: Number(m[1]), height: Number(m[2]) };
}

/** A minimal CSV reader for the files chartCsv writes (RFC 4180 quoting). */
function parseCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [], cell = "", quoted = false;
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (quoted) {
      if (c === '"' && text[i + 1] === '"') (cell += '"', i++);
      else if (c === '"') quoted = false;
      else cell += c;
    } else if (c === '"') quoted = true;
    else if (c === ",") (row.push(cell), cell = "");
    else if (c === "\n") (row.push(cell), rows.push(row), row = [], cell = "");
    else cell += c;
  }
  return rows;
}

Deno.test("chartCsv writes the plotted numbers exactly, one row per datum, units in the header", () => {
  const [msd] = buildCharts(aggregateOf(syntheticStudy()), { units: { length: "ℓ", time: "ℓ²/κ" } });
  const rows = parseCsv(chartCsv(msd)!);
  const values = (msd.spec as Json).data.values as Json[];
  assert.deepEqual(rows[0], ["point", "t [ℓ²/κ]", "mean [ℓ²]", "lower [ℓ²]", "upper [ℓ²]", "n"]);
  assert.equal(rows.length - 1, values.length);
  for (const [i, v] of values.entries()) {
    const r = rows[i + 1];
    assert.equal(r[0], v.point);
    assert.equal(Number(r[1]), v.t, "time round-trips exactly");
    assert.equal(r[2] === "" ? null : Number(r[2]), v.mean, "mean round-trips exactly");
  }
});

Deno.test("figureSpec draws the title in, scales fonts and sets the size", () => {
  const [msd] = buildCharts(aggregateOf(syntheticStudy()));
  const fig = figureSpec(msd, { width: 1000, height: 500, fontScale: 1.5 }) as Json;
  assert.equal(fig.title, msd.title);
  assert.equal(fig.width, 1000);
  assert.equal(fig.height, 500);
  assert.equal(fig.config.axis.labelFontSize, 18, "12 × 1.5");
  assert.equal(fig.config.legend.labelFontSize, 18);
  assert.throws(() => figureSpec(msd, { fontScale: 0 }), /font scale/);
});

Deno.test("writeFigures: SVG, CSV and PNG per chart; the PNG is the SVG at the chosen scale", async () => {
  const dir = await Deno.makeTempDir();
  try {
    const charts = buildCharts(aggregateOf(syntheticStudy()));
    const written = await writeFigures(dir, charts, { png: true, pngScale: 2, width: 700, fontScale: 1.2 });
    assert.equal(written.length, 3 * charts.length);
    for (const c of charts) {
      const svg = await Deno.readTextFile(`${dir}/${c.id}.svg`);
      assert.equal(checkWellFormedXml(svg), "svg");
      assert.ok(svg.includes(c.title), `${c.id}: title in the figure`);
      const png = await Deno.readFile(`${dir}/${c.id}.png`);
      const s = svgSize(svg), p = pngSize(png);
      assert.equal(p.width, 2 * s.width, `${c.id}: PNG width = 2 × SVG width`);
      assert.equal(p.height, 2 * s.height, `${c.id}: PNG height = 2 × SVG height`);
    }
    // The wider figure is wider than the page's chart (plot 700 px vs 800 px on the page; legend below).
    const page = await svgToPng(await Deno.readTextFile(`${dir}/msd.svg`), { scale: 1 });
    assert.ok(pngSize(page).width >= 700, "plot width applied");
    // Without png: no PNG left behind.
    await writeFigures(dir, charts, {});
    assert.ok(![...Deno.readDirSync(dir)].some((e) => e.name.endsWith(".png")));
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("svgToPng draws text with the bundled font (dark pixels where a label is) and refuses bad scales", async () => {
  const svg = `<svg xmlns="http://www.w3.org/2000/svg" width="120" height="40">` +
    `<text x="4" y="28" font-family="DejaVu Sans" font-size="24">Dκ²</text></svg>`;
  const png = await svgToPng(svg, { scale: 1 });
  assert.deepEqual(pngSize(png), { width: 120, height: 40 });
  const { decode } = await import("fast-png");
  const img = decode(png);
  let dark = 0;
  for (let i = 0; i < img.data.length; i += img.channels) if (img.data[i] < 128) dark++;
  assert.ok(dark > 50, `text drawn (${dark} dark pixels)`);
  await assert.rejects(() => svgToPng(svg, { scale: 0 }), /scale/);
});
