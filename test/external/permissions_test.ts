/**
 * The permission scheme and the worker life cycle, in separate Deno processes started with the launcher's
 * permissions: the flag the launcher's permission step computes (and nothing more) lets a worker start the
 * study's program; without it the realisation fails with a message saying how to run; and terminating a worker
 * (what the runner does on Ctrl-C or SIGTERM) kills the program it was running.
 */
import { assert, assertEquals } from "../_assert.ts";
import { allowRunFlag, resolveProgram } from "../../engines/external/mod.ts";
import { alive, REPO, walkerStudyText } from "./_helpers.ts";

// Deno's permission model (Deno manual, "Security and permissions": --allow-run=<programs>; workers inherit the
// permissions of their parent by default). Common practice, no source.

const LAUNCHER_FLAGS = [
  "--quiet",
  "--no-prompt",
  "--allow-read",
  "--allow-write",
  "--allow-env",
  "--allow-sys=hostname,statfs,systemMemoryInfo",
];
const HARNESS = `${REPO}test/external/_worker_harness.ts`;

async function harness(flags: string[], args: string[]): Promise<Record<string, unknown>> {
  const out = await new Deno.Command(Deno.execPath(), {
    args: ["run", ...LAUNCHER_FLAGS, ...flags, HARNESS, ...args],
    stdout: "piped",
    stderr: "piped",
  }).output();
  const text = new TextDecoder().decode(out.stdout).trim();
  assertEquals(out.code, 0, new TextDecoder().decode(out.stderr));
  return JSON.parse(text.split("\n").pop()!);
}

async function studyFile(dir: string, text: string): Promise<string> {
  const path = `${dir}/walkers.yaml`;
  await Deno.writeTextFile(path, text);
  return path;
}

Deno.test("the launcher's flag names exactly the study's program, and a worker may start it with nothing more", async () => {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-perm-" });
  try {
    const study = await studyFile(dir, walkerStudyText());
    const flag = await allowRunFlag(["run", study, "--workers", "2"]);
    const node = resolveProgram("node", dir);
    assert("path" in node);
    assertEquals(flag, `--allow-run=${node.path}`);
    const outcome = await harness([flag], ["run", study, `${dir}/work`]);
    assertEquals(outcome.status, "done", String(outcome.error));
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("without permission to start programs, the realisation fails and says how to run", async () => {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-perm-" });
  try {
    const study = await studyFile(dir, walkerStudyText());
    const outcome = await harness([], ["run", study, `${dir}/work`]);
    assertEquals(outcome.status, "failed");
    assertEquals(outcome.failureKind, "program-failed");
    const error = String(outcome.error);
    assert(error.includes("spindrift may not start /") && error.includes("./spindrift"), error);
    // Another program than the granted one is refused as well.
    const other = await harness(["--allow-run=/bin/sh"], ["run", study, `${dir}/work`]);
    assertEquals(other.failureKind, "program-failed");
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("terminating a worker (Ctrl-C in the runner) kills the program it runs, even one ignoring SIGTERM", async () => {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-term-" });
  try {
    const study = await studyFile(dir, walkerStudyText({ faults: ["hang-hard"], timeoutSeconds: 60 }));
    const flag = await allowRunFlag(["run", study]);
    const { pid } = await harness([flag], ["terminate", study, `${dir}/work`]);
    assert(typeof pid === "number" && pid > 0, `the program wrote its pid: ${pid}`);
    assertEquals(await alive(pid), false, `program ${pid} still runs after its worker was terminated`);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});
