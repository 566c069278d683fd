/**
 * From Vega-Lite to what a page or a slide needs, all inside Deno: compile Vega-Lite to Vega, render Vega to
 * SVG without a browser, and read the Vega browser runtime (`vega.min.js`) to inline in a page.
 *
 * @example
 * ```ts
 * const vg = compileChart(chart.spec!);
 * const svg = await renderSvg(vg);          // "<svg xmlns=…>…</svg>"
 * const runtime = await readVegaRuntime();  // ~0.5 MB of JavaScript
 * ```
 */
import * as vega from "vega";
import { compile, type TopLevelSpec } from "vega-lite";

/** Compiles a Vega-Lite spec to a Vega spec; Vega-Lite warnings are returned, not printed. */
export function compileChart(spec: TopLevelSpec): { vega: vega.Spec; warnings: string[] } {
  const warnings: string[] = [];
  const logger = {
    level: (_?: number) => logger,
    error: (...args: readonly unknown[]) => {
      throw new Error(`Vega-Lite: ${args.map(String).join(" ")}`);
    },
    warn: (...args: readonly unknown[]) => {
      warnings.push(args.map(String).join(" "));
      return logger;
    },
    info: () => logger,
    debug: () => logger,
  };
  // deno-lint-ignore no-explicit-any
  const out = compile(spec, { logger: logger as any });
  return { vega: out.spec, warnings };
}

/** Renders a Vega spec to a standalone SVG document (no browser, no canvas). */
export async function renderSvg(spec: vega.Spec): Promise<string> {
  const view = new vega.View(vega.parse(spec), { renderer: "none" });
  try {
    return await view.toSVG();
  } finally {
    view.finalize();
  }
}

/**
 * Reads `vega.min.js` (the browser build of the `vega` package this module imports). The package root is
 * found by walking up from the resolved module file to the folder whose package.json is named "vega", so it
 * works wherever the package manager put it.
 */
export async function readVegaRuntime(): Promise<string> {
  const path = vegaRuntimePath();
  try {
    return await Deno.readTextFile(path);
  } catch (e) {
    throw new Error(`cannot read the Vega browser runtime at ${path}: ${(e as Error).message}`);
  }
}

/** Absolute path of `vega.min.js` (see `readVegaRuntime`). */
export function vegaRuntimePath(): string {
  const entry = import.meta.resolve("vega");
  if (!entry.startsWith("file:")) {
    throw new Error(`the 'vega' package resolves to ${entry}, not a local file; run 'deno install' first`);
  }
  let dir = new URL(".", entry);
  for (let depth = 0; depth < 6; depth++) {
    try {
      const pkg = JSON.parse(Deno.readTextFileSync(new URL("package.json", dir)));
      if (pkg.name === "vega") return decodeURIComponent(new URL("build/vega.min.js", dir).pathname);
    } catch {
      // no package.json here: keep walking up
    }
    dir = new URL("..", dir);
  }
  throw new Error(`cannot find the root of the 'vega' package above ${entry}`);
}
