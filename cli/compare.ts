/**
 * `spindrift compare`: writes one page with two or more studies side by side on shared axes.
 *
 * @example
 * ```ts
 * const lines = await compareCommand(["a.sqlite", "b.sqlite"], { out: "a-vs-b.html" });
 * ```
 */
import { writeComparePage } from "../reports/compare.ts";
import { StoreReadError } from "../store/reads.ts";
import { userFacing } from "./analyse.ts";
import { UserError } from "./errors.ts";

/** `spindrift compare`: writes the compare page; returns the lines to print. */
export async function compareCommand(
  dbPaths: readonly string[],
  o: { readonly out?: string },
): Promise<string[]> {
  if (dbPaths.length < 2) {
    throw new UserError(
      `compare needs at least two study databases, got ${dbPaths.length}`,
      "spindrift compare A.sqlite B.sqlite [--out FILE]",
    );
  }
  try {
    const res = await writeComparePage(dbPaths, { out: o.out });
    return [
      ...res.warnings.map((w) => `warning: ${w}`),
      `comparison: ${res.html}`,
      `figures (SVG and the plotted data as CSV): ${res.figuresDir}`,
    ];
  } catch (e) {
    const path = e instanceof StoreReadError
      ? (dbPaths.find((p) => e.message.includes(p)) ?? dbPaths[0])
      : "";
    throw userFacing(e, path);
  }
}
