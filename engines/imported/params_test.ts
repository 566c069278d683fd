import { deepStrictEqual as assertEquals } from "node:assert/strict";
import { filaments3dParamsSchema, sourceFormat, tracks2dParamsSchema } from "./params.ts";

/** The issues of a failed parse as "path: message" lines. */
function issues(
  schema: {
    safeParse(
      v: unknown,
    ): { success: boolean; error?: { issues: { path: PropertyKey[]; message: string }[] } };
  },
  value: unknown,
): string[] {
  const r = schema.safeParse(value);
  if (r.success) return [];
  return r.error!.issues.map((i) => `${i.path.join(".")}: ${i.message}`);
}

function expectIssue(found: string[], path: string, part: string): void {
  if (!found.some((f) => f.startsWith(`${path}:`) && f.includes(part))) {
    throw new Error(`expected an issue at ${path} containing '${part}', got:\n${found.join("\n")}`);
  }
}

// Schema rules are spindrift's own study format (issue: study files validated by a zod schema); common
// practice, no source.
Deno.test("tracks2dParamsSchema: defaults are the export format's column names", () => {
  const p = tracks2dParamsSchema.parse({ source: { files: "runs/r{index}.csv" } });
  assertEquals(p.columns, { t: "t", id: "id", x: "x", y: "y", circulation: "circulation" });
  assertEquals(p.timing, { origin: "first-record", matchTolerance: 1e-6, allowEarlyEnd: false });
  assertEquals(p.units, {});
  assertEquals(sourceFormat(p.source), "csv");
});

Deno.test("tracks2dParamsSchema: source needs exactly one of files and file", () => {
  expectIssue(issues(tracks2dParamsSchema, { source: {} }), "source", "give exactly one of source.files");
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv", files: ["b.csv"] } }),
    "source",
    "exactly one",
  );
});

Deno.test("tracks2dParamsSchema: a files pattern without {index} is refused (every realisation would read one file)", () => {
  expectIssue(
    issues(tracks2dParamsSchema, { source: { files: "run.csv" } }),
    "source.files",
    "has no {index}",
  );
});

Deno.test("tracks2dParamsSchema: unknown extension without format, and options of another format", () => {
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.dat" } }),
    "source.format",
    "cannot tell the format",
  );
  assertEquals(
    issues(tracks2dParamsSchema, { source: { file: "a.dat", format: "csv", delimiter: "whitespace" } }),
    [],
  );
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.h5", delimiter: "," } }),
    "source.delimiter",
    "csv/tsv",
  );
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv", group: "/r" } }),
    "source.group",
    "hdf5",
  );
  assertEquals(sourceFormat({ file: "A.NDJSON" }), "jsonl");
});

Deno.test("tracks2dParamsSchema: realisation options need a realisation column and source.file", () => {
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv", realisationOffset: 1 } }),
    "source.realisationOffset",
    "needs source.realisationColumn",
  );
  expectIssue(
    issues(tracks2dParamsSchema, { source: { files: "r{index}.csv", realisationColumn: "run" } }),
    "source.realisationColumn",
    "each file is one realisation",
  );
  expectIssue(
    issues(tracks2dParamsSchema, {
      source: { file: "a.csv", realisationColumn: "run", realisationOffset: 1, realisationValues: [3] },
    }),
    "source.realisationValues",
    "not both",
  );
});

Deno.test("tracks2dParamsSchema: column positions need a headerless file, names a header", () => {
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv" }, columns: { x: 3 } }),
    "columns.x",
    "needs a file without a header",
  );
  expectIssue(
    issues(tracks2dParamsSchema, {
      source: { file: "a.csv", header: false },
      columns: { t: 1, id: 2, x: 3, y: 4 },
    }),
    "columns.circulation",
    "1-based position, not 'circulation'",
  );
});

Deno.test("tracks2dParamsSchema: one column cannot feed two fields", () => {
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv" }, columns: { y: "x" } }),
    "columns.y",
    "already used for x",
  );
});

Deno.test("tracks2dParamsSchema: units are checked statically, at the unit's path", () => {
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv" }, columns: { x: { name: "x", unit: "um" } } }),
    "columns.x.unit",
    "units.length does not say what one study length unit is",
  );
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv" }, columns: { t: { name: "t", unit: "ms" } } }),
    "columns.t.unit",
    "units.time",
  );
  expectIssue(
    issues(tracks2dParamsSchema, {
      source: { file: "a.csv" },
      columns: { x: { name: "x", unit: "xi" } },
      units: { length: "um" },
    }),
    "columns.x.unit",
    "units.healingLength",
  );
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv" }, columns: { x: { name: "x", unit: "inch" } } }),
    "columns.x",
    "",
  );
  assertEquals(
    issues(tracks2dParamsSchema, {
      source: { file: "a.csv" },
      columns: { x: { name: "x", unit: "um", scale: 0.16 }, t: { name: "t", unit: "ms" } },
      units: { length: "um", kappa: 9.97e-8 },
    }),
    [],
  );
});

Deno.test("tracks2dParamsSchema: timing.matchTolerance must stay below one half (frames take distinct records)", () => {
  expectIssue(
    issues(tracks2dParamsSchema, { source: { file: "a.csv" }, timing: { matchTolerance: 0.5 } }),
    "timing.matchTolerance",
    "",
  );
});

Deno.test("filaments3dParamsSchema: defaults, optional columns, markers without a column", () => {
  const p = filaments3dParamsSchema.parse({ source: { file: "a.csv" }, coreRadius: 0.001 });
  assertEquals(p.columns.order, "order");
  assertEquals(p.markersWithoutColumn, undefined);
  expectIssue(
    issues(filaments3dParamsSchema, {
      source: { file: "a.csv" },
      coreRadius: 0.001,
      columns: { marker: null },
    }),
    "markersWithoutColumn",
    "say which points are Lagrangian markers",
  );
  expectIssue(
    issues(filaments3dParamsSchema, {
      source: { file: "a.csv" },
      coreRadius: 0.001,
      markersWithoutColumn: "none",
    }),
    "markersWithoutColumn",
    "applies only when columns.marker is null",
  );
  const q = filaments3dParamsSchema.parse({
    source: { file: "a.csv" },
    coreRadius: 0.001,
    columns: { marker: null, order: null },
    markersWithoutColumn: "all",
  });
  assertEquals([q.columns.marker, q.columns.order], [null, null]);
  expectIssue(
    issues(filaments3dParamsSchema, {
      source: { file: "a.csv" },
      coreRadius: 0.001,
      columns: { marker: null, id: null },
      markersWithoutColumn: "all",
    }),
    "markersWithoutColumn",
    "needs persistent point ids",
  );
  expectIssue(issues(filaments3dParamsSchema, { source: { file: "a.csv" } }), "coreRadius", "");
  expectIssue(
    issues(filaments3dParamsSchema, { source: { file: "a.csv" }, coreRadius: { value: 1e-8, unit: "cm" } }),
    "coreRadius.unit",
    "units.length",
  );
});
