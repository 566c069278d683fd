/**
 * A module worker of `analyseStudy`: analyses the parameter points it is sent (its own read-only handle on the
 * database) and posts their rows back; the main thread alone writes `ensemble_results`.
 */
import { openStoreReadOnly } from "../store/reads.ts";
import { analysePointAt, type AnalysisWorkerMessage, studySetup } from "./analyse.ts";
import { AnalysisInputError } from "./errors.ts";
import type { AnalyseOptions } from "./options.ts";

const self = globalThis as unknown as {
  onmessage: ((e: MessageEvent<{ dbPath: string; opts: AnalyseOptions; index: number }>) => void) | null;
  postMessage(m: AnalysisWorkerMessage): void;
};

self.onmessage = async (e) => {
  const { dbPath, opts, index } = e.data;
  const db = openStoreReadOnly(dbPath);
  try {
    const setup = studySetup(db, opts);
    const r = await analysePointAt(
      db,
      setup,
      index,
      opts,
      (message) => self.postMessage({ type: "progress", message }),
    );
    self.postMessage({ type: "done", index, rows: r.rows, point: r.point });
  } catch (err) {
    self.postMessage({
      type: "error",
      message: err instanceof Error ? err.message : String(err),
      inputError: err instanceof AnalysisInputError,
    });
  } finally {
    db.close();
  }
};
