import { assert, assertEquals, assertThrows } from "../../test/_assert.ts";
import { jobNameFor, renderSbatchScript, type SbatchScriptInput, shellQuote } from "./sbatch_script.ts";
import { CLUSTER_DEFAULTS, resolveClusterResources } from "./slurm_schema.ts";
import { ExecutorError } from "./errors.ts";

function input(over: Partial<SbatchScriptInput> = {}): SbatchScriptInput {
  return {
    jobName: "spindrift-film",
    tasks: 12,
    resources: CLUSTER_DEFAULTS,
    launcher: "/home/u/spindrift/spindrift",
    manifestPath: "/scratch/film-cluster/20261201T101500Z/manifest.json",
    submissionDir: "/scratch/film-cluster/20261201T101500Z",
    description: "study film",
    ...over,
  };
}

function directives(script: string): string[] {
  return script.split("\n").filter((l) => l.startsWith("#SBATCH ")).map((l) => l.slice(8));
}

/** Runs the POSIX shell's syntax check (`sh -n`) on a script: an outside judge of the quoting. */
async function shellAccepts(script: string): Promise<{ ok: boolean; err: string }> {
  const child = new Deno.Command("sh", { args: ["-n"], stdin: "piped", stderr: "piped", stdout: "null" })
    .spawn();
  const w = child.stdin.getWriter();
  await w.write(new TextEncoder().encode(script));
  await w.close();
  const out = await child.output();
  return { ok: out.success, err: new TextDecoder().decode(out.stderr) };
}

/** What `sh` makes of the exec line when SLURM_* are set: the argument vector, printed one per line. */
async function argumentsOf(script: string, env: Record<string, string>): Promise<string[]> {
  const body = script.replace(/^exec /m, "printf '%s\\n' ");
  const out = await new Deno.Command("sh", { args: ["-c", body], env, stdout: "piped", stderr: "piped" })
    .output();
  assert(out.success, new TextDecoder().decode(out.stderr));
  return new TextDecoder().decode(out.stdout).trimEnd().split("\n");
}

Deno.test("renderSbatchScript: one array task per slice with the resources as #SBATCH lines", () => {
  const s = renderSbatchScript(input());
  assert(s.startsWith("#!/bin/sh\n"));
  // sbatch(1): "--array=<indexes> ... A maximum number of simultaneously running tasks from the job array may
  // be specified using a "%" separator." Indices are 0-based here: task k runs slice k.
  assertEquals(directives(s), [
    "--job-name=spindrift-film",
    "--array=0-11",
    "--nodes=1",
    "--ntasks=1",
    "--cpus-per-task=1",
    "--mem=2G",
    "--time=24:00:00",
    "--output=/scratch/film-cluster/20261201T101500Z/task-%A_%a.log",
    "--open-mode=append",
  ]);
});

Deno.test("renderSbatchScript: optional partition, account, throttle and extra lines appear only when set", () => {
  const resources = resolveClusterResources({
    partition: "short",
    account: "qturb",
    maxConcurrent: 4,
    cpusPerTask: 2,
    extraLines: ["--qos=long", "#SBATCH --constraint=avx2"],
  });
  const d = directives(renderSbatchScript(input({ resources })));
  assert(d.includes("--array=0-11%4"), d.join("\n"));
  assert(d.includes("--partition=short"));
  assert(d.includes("--account=qturb"));
  assert(d.includes("--cpus-per-task=2"));
  assertEquals(d.slice(-2), ["--qos=long", "--constraint=avx2"], "extra lines last, so they can override");
  assert(!directives(renderSbatchScript(input())).some((l) => l.startsWith("--partition")));
});

Deno.test("renderSbatchScript: the shell parses it, and the task gets its slice and its own shard path", async () => {
  const launcher = "/home/o'brien/spindrift/spindrift";
  const s = renderSbatchScript(input({ launcher }));
  const syntax = await shellAccepts(s);
  assert(syntax.ok, syntax.err);
  const argv = await argumentsOf(s, {
    SLURM_ARRAY_TASK_ID: "7",
    SLURM_ARRAY_JOB_ID: "4711",
    PATH: "/usr/bin:/bin",
  });
  assertEquals(argv, [
    launcher,
    "run-slice",
    "/scratch/film-cluster/20261201T101500Z/manifest.json",
    "--slice",
    "7",
    "--shard",
    "/scratch/film-cluster/20261201T101500Z/shard-4711-7.sqlite",
    "--workers",
    "1",
  ]);
});

Deno.test("renderSbatchScript: refuses paths sbatch directives cannot carry, and relative paths", () => {
  assertThrows(
    () =>
      renderSbatchScript(input({ submissionDir: "/scratch/my results/x", manifestPath: "/scratch/m.json" })),
    ExecutorError,
    "white space",
  );
  assertThrows(() => renderSbatchScript(input({ launcher: "spindrift" })), ExecutorError, "absolute");
  assertThrows(() => renderSbatchScript(input({ tasks: 0 })), ExecutorError, "at least one task");
});

Deno.test("renderSbatchScript: a percent sign in the folder is escaped in the --output pattern", () => {
  // sbatch(1), filename pattern: "%% The character "%"."
  const s = renderSbatchScript(
    input({ submissionDir: "/scratch/100%/x", manifestPath: "/scratch/100%/x/m.json" }),
  );
  assert(directives(s).includes("--output=/scratch/100%%/x/task-%A_%a.log"), s);
});

Deno.test("shellQuote and jobNameFor: quoting round-trips through sh; job names are plain", async () => {
  const word = `a'b "c" $d \`e\``;
  const out = await new Deno.Command("sh", { args: ["-c", `printf %s ${shellQuote(word)}`], stdout: "piped" })
    .output();
  assertEquals(new TextDecoder().decode(out.stdout), word);
  assertEquals(jobNameFor("film patch/α"), "spindrift-film_patch_");
});
