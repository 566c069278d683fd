/// <reference lib="deno.worker" />
/**
 * Test worker: runs one realisation task the way study/worker.ts does (executeRealisation), with the external
 * engines available even before the registry lists them, and posts the outcome.
 */
import type { RealisationTask } from "../../study/execute.ts";
import { runTask } from "./_helpers.ts";

self.onmessage = async (ev: MessageEvent<RealisationTask>) => {
  const { outcome } = await runTask(ev.data);
  self.postMessage(outcome);
};
