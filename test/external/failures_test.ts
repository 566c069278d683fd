/**
 * A failing, hanging, silent, malformed or crashing program fails only its own realisation, with the reason
 * (kind, exit status, last output, command, work folder) in the outcome the runner stores; the realisations of
 * the same study whose program works are computed as usual.
 */
import { assert, assertEquals } from "../_assert.ts";
import {
  alive,
  externalTask,
  loadStudyText,
  programRun,
  runAll,
  runTask,
  walkerStudyText,
} from "./_helpers.ts";
import { planStudy } from "../../study/plan.ts";

// Failure kinds and messages are spindrift's own design (engines/external/engine.ts); exit statuses and
// signals as POSIX defines them (POSIX.1-2017 XSH wait(), XBD <signal.h>). Common practice, no source.

Deno.test("a study whose programs fail in every way still computes its good realisations", async () => {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-faults-" });
  try {
    const faults = ["none", "exit", "hang", "no-output", "malformed", "abort"];
    const study = loadStudyText(
      walkerStudyText({ faults, timeoutSeconds: 1.5, killGraceSeconds: 1 }),
      `${dir}/s.yaml`,
    );
    const t0 = performance.now();
    const ran = await runAll(study, `${dir}/work`, 3);
    const byFault = new Map(ran.map((x) => [faults[x.r.pointIndex], x]));
    assert(performance.now() - t0 < 20_000, "the hanging program was stopped at its limit");

    const good = byFault.get("none")!;
    assertEquals(good.outcome.status, "done", good.outcome.error);
    assertEquals(good.frames.length, 21);

    const expectations: [string, string, string[]][] = [
      ["exit", "program-failed", [
        "the program exited with code 3",
        "last output (stderr): walker: failing on purpose (fault=exit)",
      ]],
      ["hang", "timeout", [
        "ran past timeoutSeconds = 1.5 s and was stopped (SIGTERM)",
        "walker: hanging on purpose",
      ]],
      ["no-output", "program-failed", [
        "exited with code 0",
        "wrote no output file 'tracks.csv'",
        "walker.json",
      ]],
      ["malformed", "invalid-state", [
        "in the program's output: ",
        "tracks.csv:",
        "got '1.2.3', expected a number",
      ]],
      ["abort", "program-failed", ["ended by signal SIGABRT (6)"]],
    ];
    for (const [fault, kind, texts] of expectations) {
      const { outcome, frames } = byFault.get(fault)!;
      assertEquals(outcome.status, "failed", fault);
      assertEquals(outcome.failureKind, kind, `${fault}: ${outcome.error}`);
      for (const text of texts) {
        assert(outcome.error!.includes(text), `${fault}: '${text}' not in: ${outcome.error}`);
      }
      assert(outcome.error!.includes("command: /"), outcome.error);
      assert(
        outcome.error!.includes(`work folder: ${dir}/work/r0-`) && outcome.error!.includes("(kept)"),
        outcome.error,
      );
      // Frames read before the bad row are kept, as for any failed realisation (the bad row is in frame 5).
      assertEquals(frames.length, fault === "malformed" ? 5 : 0, fault);
      // The program's record is stored with the failed realisation too.
      const run = programRun(outcome);
      assertEquals((run.detail.argv as string[]).includes(fault), true, fault);
    }
    assertEquals(programRun(byFault.get("exit")!.outcome).data.exit_code, 3);
    assertEquals(programRun(byFault.get("hang")!.outcome).data.timed_out, 1);
    assertEquals(programRun(byFault.get("abort")!.outcome).data.signal, 6);
    // Failed realisations keep their work folders (keepWorkFolders: failed); the good one's is gone.
    assertEquals([...Deno.readDirSync(`${dir}/work`)].length, 5);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("a program that ignores SIGTERM at its time limit is killed with SIGKILL after the grace period", async () => {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-hang-" });
  try {
    const study = loadStudyText(
      walkerStudyText({ faults: ["hang-hard"], timeoutSeconds: 1, killGraceSeconds: 0.5 }),
      `${dir}/s.yaml`,
    );
    const task = externalTask(study, planStudy(study)[0], `${dir}/work`);
    const t0 = performance.now();
    const { outcome } = await runTask(task);
    const seconds = (performance.now() - t0) / 1000;
    assertEquals(outcome.failureKind, "timeout");
    assert(outcome.error!.includes("(SIGTERM, then SIGKILL after 0.5 s)"), outcome.error);
    assert(seconds >= 1.5 && seconds < 10, `took ${seconds} s`);
    const run = programRun(outcome);
    assert(
      (run.detail.stdout_tail as string).includes("walker: ignoring SIGTERM"),
      run.detail.stdout_tail as string,
    );
    // The process is gone: its pid file names a process that no longer exists.
    const folder = run.detail.work_folder as string;
    const pid = Number(Deno.readTextFileSync(`${folder}/walker.pid`).trim());
    assertEquals(await alive(pid), false);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});
