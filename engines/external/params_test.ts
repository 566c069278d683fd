import { assert, assertEquals } from "../../test/_assert.ts";
import { external2dParamsSchema, external3dParamsSchema, fileNameProblem } from "./params.ts";

// The study format is spindrift's own (engines/external/params.ts); common practice, no source.

const minimal = {
  command: { program: "./sim", args: ["--seed", "{seed}", "--out", "{output}"] },
  output: { file: "tracks.csv" },
  timeoutSeconds: 60,
};

/** "path: message" of every issue. */
function issues(
  schema: typeof external2dParamsSchema | typeof external3dParamsSchema,
  value: unknown,
): string[] {
  const r = schema.safeParse(value);
  return r.success ? [] : r.error.issues.map((i) => `${i.path.join(".")}: ${i.message}`);
}

function has(list: string[], path: string, text: string): void {
  assert(
    list.some((i) => i.startsWith(`${path}: `) && i.includes(text)),
    `no issue at ${path} with '${text}' in:\n${list.join("\n")}`,
  );
}

Deno.test("external2dParamsSchema fills defaults for a minimal study", () => {
  const p = external2dParamsSchema.parse(minimal);
  assertEquals(p.command.shell, false);
  assertEquals(p.inputFiles, []);
  assertEquals(p.environment, {});
  assertEquals(p.parameters, {});
  assertEquals(p.killGraceSeconds, 5);
  assertEquals(p.workDirectory, "spindrift-work");
  assertEquals(p.keepWorkFolders, "failed");
  assertEquals(p.columns, { t: "t", id: "id", x: "x", y: "y", circulation: "circulation" });
  assertEquals(p.timing.matchTolerance, 1e-6);
});

Deno.test("external3dParamsSchema needs the core radius and takes the 3D columns", () => {
  has(issues(external3dParamsSchema, minimal), "coreRadius", "");
  const p = external3dParamsSchema.parse({ ...minimal, coreRadius: 1e-8 });
  assertEquals(p.columns.loop, "loop");
});

Deno.test("external2dParamsSchema refuses placeholders in a program started directly", () => {
  const list = issues(external2dParamsSchema, { ...minimal, command: { program: "./sim-{param.v}" } });
  has(list, "command.program", "named as written");
  // With shell: true the program is a command line, and its placeholders are checked like arguments.
  const shell = issues(external2dParamsSchema, {
    ...minimal,
    command: { program: "cd sub && ./sim --seed {seed} --n {param.n}", shell: true },
  });
  has(shell, "command.program", "parameters.n is not set");
  assertEquals(
    issues(external2dParamsSchema, { ...minimal, command: { program: "./sim {seed}", shell: true } }),
    [],
  );
});

Deno.test("external2dParamsSchema reports every placeholder, file and environment problem at its path", () => {
  const list = issues(external2dParamsSchema, {
    ...minimal,
    command: { program: "./sim", args: ["--x", "{param.E}", 3, "{indx}"] },
    environment: { SPINDRIFT_SEED: "1", "BAD-NAME": "x", OK: "{run.steps}" },
    inputFiles: [
      { file: "a.json", text: "{}", template: "a.tpl" },
      { file: "../escape.json", text: "x" },
      { file: "b.json" },
      { file: "./a.json", text: "{seed}" },
      { file: "tracks.csv", text: "x" },
      { file: "{workdir}/c.json", text: "x" },
    ],
    parameters: { "a.b": 1, nested: { "x y": 2 } },
  });
  has(list, "command.args.1", "parameters.E is not set");
  has(list, "command.args.3", "did you mean {index}?");
  has(list, "environment.SPINDRIFT_SEED", "set by spindrift itself");
  has(list, "environment.BAD-NAME", "not a variable name");
  has(list, "environment.OK", "unknown run control 'steps'");
  has(list, "inputFiles.0", "exactly one of template");
  has(list, "inputFiles.1.file", "no '..'");
  has(list, "inputFiles.2", "exactly one of template");
  has(list, "inputFiles.3.file", "already written by inputFiles[0]");
  has(list, "inputFiles.4.file", "also the output file");
  has(list, "inputFiles.5.file", "{workdir} is a path");
  has(list, "parameters.a.b", "cannot be reached");
  has(list, "parameters.nested.x y", "cannot be reached");
  assertEquals(list.length, 13, list.join("\n"));
});

Deno.test("external2dParamsSchema checks the output with the imported-data rules, at output.* paths", () => {
  has(
    issues(external2dParamsSchema, { ...minimal, output: { file: "tracks.dat" } }),
    "output.format",
    "set output.format",
  );
  has(
    issues(external2dParamsSchema, { ...minimal, output: { file: "/abs/tracks.csv" } }),
    "output.file",
    "relative",
  );
  has(
    issues(external2dParamsSchema, { ...minimal, output: { file: "spindrift-stdout.txt", format: "csv" } }),
    "output.file",
    "standard output",
  );
  has(
    issues(external2dParamsSchema, { ...minimal, output: { file: "t.h5", delimiter: ";" } }),
    "output.delimiter",
    "csv/tsv",
  );
  has(
    issues(external2dParamsSchema, { ...minimal, columns: { x: "pos", y: "pos" } }),
    "columns.y",
    "already used",
  );
  has(
    issues(external2dParamsSchema, { ...minimal, columns: { x: { name: "x", unit: "um" } } }),
    "columns.x.unit",
    "units.length",
  );
  assertEquals(issues(external2dParamsSchema, { ...minimal, output: { file: "run-{index:3}.tsv" } }), []);
});

Deno.test("external2dParamsSchema refuses a missing, zero or infinite time limit and unknown keys", () => {
  const { timeoutSeconds: _t, ...noLimit } = minimal;
  has(issues(external2dParamsSchema, noLimit), "timeoutSeconds", "");
  has(issues(external2dParamsSchema, { ...minimal, timeoutSeconds: 0 }), "timeoutSeconds", "");
  has(issues(external2dParamsSchema, { ...minimal, timeoutSeconds: Infinity }), "timeoutSeconds", "");
  // Timers hold milliseconds in a signed 32-bit integer (HTML Living Standard, timer initialisation steps).
  has(
    issues(external2dParamsSchema, { ...minimal, timeoutSeconds: 3e6 }),
    "timeoutSeconds",
    "at most 2000000 s",
  );
  has(issues(external2dParamsSchema, { ...minimal, keepWorkFolders: "sometimes" }), "keepWorkFolders", "");
  has(issues(external2dParamsSchema, { ...minimal, command: { program: "x", argv: [] } }), "command", "argv");
});

Deno.test("fileNameProblem keeps names inside the work folder", () => {
  assertEquals(fileNameProblem("out/tracks.csv"), null);
  assertEquals(fileNameProblem("./tracks.csv"), null);
  assert(fileNameProblem("/tmp/x") !== null);
  assert(fileNameProblem("a/../../x") !== null);
  assert(fileNameProblem("dir/") !== null);
  assert(fileNameProblem("./spindrift-stderr.txt") !== null);
});
