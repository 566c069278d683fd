import { assert, assertEquals } from "../test/_assert.ts";
import { z } from "zod";
import { type Engine, EngineFailure, type EngineRunSummary, type FrameSink } from "../engines/contract.ts";
import { DEFAULT_CLASSIFICATION } from "../engines/observables/mod.ts";
import { executeRealisation, type RealisationTask } from "./execute.ts";
import type { FrameRow } from "../store/db.ts";

/** A two-vortex toy engine whose behaviour each test chooses: it lets us test the sink's guards in isolation. */
function toyEngine(behaviour: "ok" | "nan" | "throw" | "failure" | "silent"): Engine<unknown> {
  return {
    id: "toy",
    version: "1",
    title: "toy",
    capabilities: {
      dimension: 2,
      fields: ["circulation"],
      objects: "vortex",
      events: {},
      diagnostics: { energy: "test" },
      units: { length: "ℓ", time: "ℓ²/κ", circulation: "κ" },
    },
    paramsSchema: z.object({}),
    run(_input, sink: FrameSink): EngineRunSummary {
      if (behaviour === "silent") return { scalars: {} };
      const x = new Float64Array([0, 1]), y = new Float64Array([0, 0]);
      for (let k = 0; k < 3; k++) {
        if (k === 2 && behaviour === "nan") x[1] = Number.NaN;
        if (k === 2 && behaviour === "throw") throw new TypeError("boom");
        if (k === 2 && behaviour === "failure") {
          throw new EngineFailure("step-underflow", "step too small", 0.2);
        }
        sink.frame({
          index: k,
          t: k * 0.1,
          n: 2,
          id: new Int32Array([0, 1]),
          x,
          y,
          z: null,
          circulation: new Float64Array([1, 1]),
          loop: null,
          marker: null,
          diagnostics: { energy: k },
        });
      }
      return { scalars: { steps: 3 } };
    },
  };
}

function task(): RealisationTask {
  return {
    engineId: "toy",
    engineVersion: "1",
    params: {},
    controls: { duration: 0.2, sampleInterval: 0.1, tolerance: 1e-9, maxDistance: 100 },
    seedState: [1, 2, 3, 4],
    realisationIndex: 0,
    observables: { record: ["cluster"], classification: DEFAULT_CLASSIFICATION },
  };
}

async function run(behaviour: Parameters<typeof toyEngine>[0]) {
  const frames: FrameRow[] = [];
  const engine = toyEngine(behaviour);
  const outcome = await executeRealisation(
    task(),
    (f) => frames.push(...f),
    (id) => id === "toy" ? engine : undefined,
  );
  return { outcome, frames };
}

Deno.test("executeRealisation stores diagnostics as diag.* series and engine scalars", async () => {
  const { outcome, frames } = await run("ok");
  assertEquals(outcome.status, "done");
  assertEquals(frames.length, 3);
  assertEquals(Array.from(outcome.series["diag.energy"].v), [0, 1, 2]);
  assertEquals(outcome.scalars.steps, 3);
  assertEquals(outcome.simTimeReached, 0.2);
});

Deno.test("executeRealisation turns a NaN position into a failed realisation and keeps earlier frames", async () => {
  const { outcome, frames } = await run("nan");
  assertEquals(outcome.status, "failed");
  assertEquals(outcome.failureKind, "nan");
  assert(outcome.error!.includes("object 1"), outcome.error);
  assertEquals(frames.length, 2);
});

Deno.test("executeRealisation records an engine exception and an EngineFailure with their reasons", async () => {
  const a = await run("throw");
  assertEquals(a.outcome.failureKind, "exception");
  assert(a.outcome.error!.includes("boom"));
  const b = await run("failure");
  assertEquals(b.outcome.failureKind, "step-underflow");
  assertEquals(b.outcome.simTimeReached, 0.2);
});

Deno.test("executeRealisation fails a run that produced no frames", async () => {
  const { outcome } = await run("silent");
  assertEquals(outcome.status, "failed");
  assertEquals(outcome.failureKind, "invalid-state");
});
