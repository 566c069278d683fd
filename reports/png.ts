/**
 * SVG → PNG without a browser: resvg compiled to WebAssembly (npm `@resvg/resvg-wasm`), with the DejaVu Sans
 * fonts of npm `dejavu-fonts-ttf` (the figures name that family first, and it covers the Greek letters,
 * sub- and superscripts the charts use), so a PNG looks the same on every machine, fonts installed or not.
 * The WebAssembly module and the fonts are read once per process from the installed packages.
 *
 * @example
 * ```ts
 * const png = await svgToPng(svgText, { scale: 2 }); // Uint8Array, twice the SVG's pixel size
 * await Deno.writeFile("msd.png", png);
 * ```
 */
import { initWasm, Resvg } from "@resvg/resvg-wasm";

let ready: Promise<Uint8Array[]> | null = null;

/** Reads a file that belongs to an installed package (`specifier` resolves inside node_modules). */
async function packageFile(specifier: string, relative: string): Promise<Uint8Array> {
  const url = new URL(relative, import.meta.resolve(specifier));
  try {
    return await Deno.readFile(url);
  } catch (e) {
    throw new Error(
      `cannot read ${decodeURIComponent(url.pathname)} (npm package of ${specifier}): ${
        (e as Error).message
      }; ` +
        "run ./spindrift --help once to install the project's packages",
    );
  }
}

/** Initialises resvg's WebAssembly and loads the fonts, once. */
function setup(): Promise<Uint8Array[]> {
  ready ??= (async () => {
    await initWasm(await packageFile("@resvg/resvg-wasm/index_bg.wasm", "./index_bg.wasm"));
    return await Promise.all(
      ["DejaVuSans.ttf", "DejaVuSans-Bold.ttf", "DejaVuSans-Oblique.ttf"].map((f) =>
        packageFile("dejavu-fonts-ttf/package.json", `./ttf/${f}`)
      ),
    );
  })();
  return ready;
}

/** Renders an SVG document to PNG bytes at `scale` times its pixel size (default 2: print resolution). */
export async function svgToPng(svg: string, opts: { readonly scale?: number } = {}): Promise<Uint8Array> {
  const fonts = await setup();
  const scale = opts.scale ?? 2;
  if (!(scale > 0 && scale <= 16)) throw new RangeError(`PNG scale must be in (0, 16], got ${scale}`);
  const r = new Resvg(svg, {
    fitTo: { mode: "zoom", value: scale },
    background: "#ffffff",
    font: { fontBuffers: fonts, defaultFontFamily: "DejaVu Sans", sansSerifFamily: "DejaVu Sans" },
  });
  try {
    const img = r.render();
    try {
      return img.asPng();
    } finally {
      img.free();
    }
  } finally {
    r.free();
  }
}
