import { assert, assertEquals } from "../../test/_assert.ts";
import { EngineFailure } from "../contract.ts";
import type { Invocation } from "./invocation.ts";
import { STDERR_LOG, STDOUT_LOG } from "./params.ts";
import { prepareWorkFolder, runProgram, TAIL_BYTES } from "./run_program.ts";

// Exit statuses and signals as POSIX defines them (POSIX.1-2017 XSH wait(), XBD <signal.h>); signal numbers
// as on Linux (signal(7): SIGSEGV = 11). The programs are /bin/sh command lines (XCU sh).

function invocation(script: string, inputFiles: Invocation["inputFiles"] = []): Invocation {
  const root = Deno.makeTempDirSync({ prefix: "spindrift-run-" });
  const workFolder = `${root}/r0-test`;
  return {
    program: "/bin/sh",
    version: undefined,
    argv: ["/bin/sh", "-c", script],
    environment: { SPINDRIFT_INDEX: "0", GREETING: "hello" },
    workFolder,
    inputFiles,
    outputFile: `${workFolder}/out.csv`,
    outputGroup: undefined,
    seed: { seed: 1n, high: 0, low: 1, text: "1", text32: "0" },
    index: 0,
    shell: false,
  };
}

async function run(inv: Invocation, timeoutSeconds = 20, killGraceSeconds = 5, drainMilliseconds = 2000) {
  await prepareWorkFolder(inv);
  return await runProgram(inv, { timeoutSeconds, killGraceSeconds, drainMilliseconds });
}

function cleanup(inv: Invocation): void {
  Deno.removeSync(inv.workFolder.slice(0, inv.workFolder.lastIndexOf("/")), { recursive: true });
}

Deno.test("runProgram reports the exit code and keeps both streams, in the work folder, with the environment", async () => {
  const inv = invocation('echo "$GREETING from $(pwd)"; cat in.txt; echo oops >&2; exit 7', [
    { name: "in.txt", content: "input file\n", source: "inline text" },
  ]);
  try {
    const r = await run(inv);
    assertEquals(r.exitCode, 7);
    assertEquals(r.signal, null);
    assertEquals(r.timedOut, false);
    assertEquals(r.stdout.text, `hello from ${inv.workFolder}\ninput file\n`);
    assertEquals(r.stderr.text, "oops\n");
    assertEquals(Deno.readTextFileSync(`${inv.workFolder}/${STDOUT_LOG}`), r.stdout.text);
    assertEquals(Deno.readTextFileSync(`${inv.workFolder}/${STDERR_LOG}`), "oops\n");
    assertEquals(r.pipesLeftOpen, false);
  } finally {
    cleanup(inv);
  }
});

Deno.test("runProgram keeps a bounded tail of a long output and the whole output on disk", async () => {
  const inv = invocation('i=0; while [ $i -lt 20000 ]; do echo "line $i"; i=$((i+1)); done');
  try {
    const r = await run(inv);
    assertEquals(r.exitCode, 0);
    const expectedBytes = Array.from({ length: 20000 }, (_, i) => `line ${i}\n`).join("").length;
    assertEquals(r.stdout.bytes, expectedBytes);
    assert(r.stdout.truncated);
    assert(new TextEncoder().encode(r.stdout.text).length <= TAIL_BYTES);
    assert(r.stdout.text.endsWith("line 19998\nline 19999\n"), r.stdout.text.slice(-40));
    assertEquals(Deno.statSync(`${inv.workFolder}/${STDOUT_LOG}`).size, expectedBytes);
  } finally {
    cleanup(inv);
  }
});

Deno.test("runProgram stops a program at its time limit with SIGTERM", async () => {
  const inv = invocation("exec sleep 30");
  try {
    const r = await run(inv, 0.3);
    assertEquals(r.timedOut, true);
    assertEquals(r.signal, "SIGTERM");
    assertEquals(r.exitCode, null);
    assert(r.wallSeconds >= 0.3 && r.wallSeconds < 5, `wall ${r.wallSeconds} s`);
  } finally {
    cleanup(inv);
  }
});

Deno.test("runProgram sends SIGKILL after the grace period to a program that ignores SIGTERM", async () => {
  const inv = invocation('trap "" TERM; echo ready; while :; do sleep 0.05; done');
  try {
    const r = await run(inv, 0.3, 0.3);
    assertEquals(r.timedOut, true);
    assertEquals(r.signal, "SIGKILL");
    assertEquals(r.signalNumber, 9);
    assert(r.wallSeconds >= 0.6 && r.wallSeconds < 5, `wall ${r.wallSeconds} s`);
    assertEquals(r.stdout.text, "ready\n");
  } finally {
    cleanup(inv);
  }
});

Deno.test("runProgram reports a program that ends on a signal of its own", async () => {
  const inv = invocation("kill -SEGV $$");
  try {
    const r = await run(inv);
    assertEquals(r.signal, "SIGSEGV");
    assertEquals(r.signalNumber, 11);
    assertEquals(r.exitCode, null);
    assertEquals(r.timedOut, false);
  } finally {
    cleanup(inv);
  }
});

Deno.test("runProgram stops waiting for output pipes that a leftover process keeps open", async () => {
  const inv = invocation("sleep 20 & echo $!");
  let leftover = 0;
  try {
    const r = await run(inv, 20, 5, 200);
    leftover = Number(r.stdout.text.trim());
    assertEquals(r.exitCode, 0);
    assertEquals(r.pipesLeftOpen, true);
    assert(r.wallSeconds < 5, `wall ${r.wallSeconds} s`);
  } finally {
    if (leftover > 0) Deno.kill(leftover, "SIGKILL");
    cleanup(inv);
  }
});

Deno.test("runProgram fails with program-failed when the executable does not exist", async () => {
  const inv = { ...invocation(""), argv: ["/nonexistent/sim", "--x"] };
  try {
    await prepareWorkFolder(inv);
    let failure: EngineFailure | null = null;
    try {
      await runProgram(inv, { timeoutSeconds: 5, killGraceSeconds: 1 });
    } catch (e) {
      if (e instanceof EngineFailure) failure = e;
      else throw e;
    }
    assert(failure !== null, "expected a failure");
    assertEquals(failure.kind, "program-failed");
    assert(failure.message.includes("/nonexistent/sim: no such file"), failure.message);
  } finally {
    cleanup(inv);
  }
});

Deno.test("prepareWorkFolder empties what an interrupted attempt left and writes the input files", async () => {
  const inv = invocation("true", [{ name: "sub/cfg.txt", content: "a = 1\n", source: "inline text" }]);
  try {
    Deno.mkdirSync(`${inv.workFolder}/old`, { recursive: true });
    Deno.writeTextFileSync(`${inv.workFolder}/out.csv`, "stale");
    await prepareWorkFolder(inv);
    const names = [...Deno.readDirSync(inv.workFolder)].map((e) => e.name).sort();
    assertEquals(names, ["sub"]);
    assertEquals(Deno.readTextFileSync(`${inv.workFolder}/sub/cfg.txt`), "a = 1\n");
  } finally {
    cleanup(inv);
  }
});
