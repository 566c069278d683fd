/**
 * Runs realisation 0 of a study in a Worker, as the runner's pool does, under whatever permissions this process
 * was started with, and prints one JSON line.
 *
 *   deno run <permissions> test/external/_worker_harness.ts run <study.yaml> <work folder>
 *     → { "status", "failureKind", "error" } of the outcome
 *   deno run <permissions> test/external/_worker_harness.ts terminate <study.yaml> <work folder>
 *     → waits until the program has written walker.pid, terminates the worker (as the runner does on Ctrl-C),
 *       waits 300 ms and prints { "pid" }
 */
import { planStudy } from "../../study/plan.ts";
import { externalTask, loadStudyText } from "./_helpers.ts";

const [mode, studyPath, work] = Deno.args;
const study = loadStudyText(await Deno.readTextFile(studyPath), studyPath);
const task = externalTask(study, planStudy(study)[0], work);
const worker = new Worker(new URL("./_worker.ts", import.meta.url).href, { type: "module" });
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

if (mode === "run") {
  const outcome = await new Promise<{ status: string; failureKind?: string; error?: string }>((resolve) => {
    worker.onmessage = (ev) => resolve(ev.data);
    worker.postMessage(task);
  });
  worker.terminate();
  console.log(
    JSON.stringify({ status: outcome.status, failureKind: outcome.failureKind, error: outcome.error }),
  );
} else if (mode === "terminate") {
  worker.postMessage(task);
  let pid = 0;
  for (let i = 0; i < 200 && pid === 0; i++) {
    await sleep(50);
    try {
      for (const e of Deno.readDirSync(work)) {
        const text = Deno.readTextFileSync(`${work}/${e.name}/walker.pid`).trim();
        if (text !== "") pid = Number(text);
      }
    } catch {
      // not written yet
    }
  }
  worker.terminate();
  await sleep(300);
  console.log(JSON.stringify({ pid }));
} else {
  console.error(`unknown mode '${mode}'`);
  Deno.exit(2);
}
