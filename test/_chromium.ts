/**
 * Headless Chromium for tests: find the browser, load a page and read its DOM after scripts ran, or take a
 * screenshot. Each call uses a fresh profile folder (removed afterwards) and no network services.
 *
 * Console output is captured with Chromium's logging on stderr; `consoleErrors` keeps the lines that report
 * uncaught exceptions or console errors. Pages can also record their own errors in the DOM (the report page
 * does: `data-errors` on body), which is the more reliable signal.
 *
 * @example
 * ```ts
 * const chromium = findChromium();
 * if (chromium) {
 *   const { dom, consoleErrors } = await dumpDom("/tmp/report.html");
 * }
 * ```
 */
import { resolve } from "node:path";
import { pathToFileURL } from "node:url";

const CANDIDATES = [
  "/usr/bin/chromium",
  "/usr/bin/chromium-browser",
  "/usr/bin/google-chrome",
  "/usr/bin/chrome",
];

/** Path of a Chromium binary (`SPINDRIFT_CHROMIUM` first, then the usual Debian paths), or null. */
export function findChromium(): string | null {
  const fromEnv = Deno.env.get("SPINDRIFT_CHROMIUM");
  for (const path of fromEnv ? [fromEnv, ...CANDIDATES] : CANDIDATES) {
    try {
      if (Deno.statSync(path).isFile) return path;
    } catch {
      // not here
    }
  }
  return null;
}

export interface BrowserOptions {
  /** Chromium binary; default `findChromium()`. */
  chromium?: string;
  /** Virtual time the page gets to run its scripts (ms, default 10000). */
  virtualTimeBudgetMs?: number;
  /** Wall-clock limit for the browser process (ms, default 90000). */
  timeoutMs?: number;
  /** Window size in CSS pixels (default 1100×900). */
  width?: number;
  height?: number;
}

export interface DumpResult {
  /** Serialized DOM after the virtual time budget. */
  readonly dom: string;
  /** Everything Chromium logged on stderr. */
  readonly stderr: string;
  /** stderr lines about uncaught exceptions and console errors raised by the page. */
  readonly consoleErrors: readonly string[];
}

/** Loads a file path or URL and returns the DOM after its scripts ran. */
export async function dumpDom(target: string | URL, opts: BrowserOptions = {}): Promise<DumpResult> {
  const { stdout, stderr } = await runChromium(target, ["--dump-dom"], opts);
  return { dom: stdout, stderr, consoleErrors: consoleErrorLines(stderr) };
}

/** Loads a file path or URL and writes a PNG screenshot of the window to `pngPath`. */
export async function screenshot(
  target: string | URL,
  pngPath: string,
  opts: BrowserOptions = {},
): Promise<void> {
  await runChromium(target, [`--screenshot=${resolve(pngPath)}`], opts);
  const info = await Deno.stat(pngPath);
  if (info.size === 0) throw new Error(`Chromium wrote an empty screenshot: ${pngPath}`);
}

function consoleErrorLines(stderr: string): string[] {
  return stderr.split("\n").filter((line) =>
    /Uncaught/.test(line) || (/CONSOLE/.test(line) && /(error|Error|ERROR)/.test(line))
  );
}

async function runChromium(
  target: string | URL,
  extra: readonly string[],
  opts: BrowserOptions,
): Promise<{ stdout: string; stderr: string }> {
  const chromium = opts.chromium ?? findChromium();
  if (chromium === null) throw new Error("Chromium not found (install the Debian package 'chromium')");
  const url = target instanceof URL
    ? target.href
    : /^[a-z]+:\/\//i.test(target)
    ? target
    : pathToFileURL(resolve(target)).href;
  const profile = await Deno.makeTempDir({ prefix: "spindrift-chromium-" });
  try {
    const args = [
      "--headless",
      "--no-sandbox",
      "--disable-gpu",
      "--disable-quic",
      "--no-first-run",
      "--disable-background-networking",
      "--disable-component-update",
      "--disable-sync",
      "--hide-scrollbars",
      `--user-data-dir=${profile}`,
      `--window-size=${opts.width ?? 1100},${opts.height ?? 900}`,
      `--virtual-time-budget=${opts.virtualTimeBudgetMs ?? 10000}`,
      "--enable-logging=stderr",
      "--v=0",
      ...extra,
      url,
    ];
    const out = await new Deno.Command(chromium, {
      args,
      stdout: "piped",
      stderr: "piped",
      signal: AbortSignal.timeout(opts.timeoutMs ?? 90000),
    }).output();
    const stdout = new TextDecoder().decode(out.stdout);
    const stderr = new TextDecoder().decode(out.stderr);
    if (!out.success) {
      throw new Error(`Chromium exited with code ${out.code} on ${url}:\n${stderr.slice(-2000)}`);
    }
    return { stdout, stderr };
  } finally {
    await Deno.remove(profile, { recursive: true }).catch(() => {});
  }
}

/** The legend labels drawn in a view's SVG (Vega's legend groups carry role-legend-label text). */
export function legendLabels(dom: string, id: string): string[] {
  const start = dom.indexOf(`id="view-${id}"`);
  const inner = dom.slice(start, dom.indexOf("</figure>", start));
  const out: string[] = [];
  for (const g of inner.matchAll(/role-legend-label"[^]*?<\/g><\/g>/g)) {
    for (const t of g[0].matchAll(/<text[^>]*>([^<]*)<\/text>/g)) out.push(t[1]);
  }
  return out;
}
