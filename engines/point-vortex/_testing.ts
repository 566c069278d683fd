/**
 * Test helpers for the point-vortex engine (private): float assertions that print got/expected/diff, and a
 * sink that copies frames and events so tests can inspect a whole run.
 */
import { type EngineEvent, EngineFailure, type EngineRunSummary, type RunControls } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { type PointVortexParams, pointVortexParamsSchema } from "./params.ts";
import { simulate } from "./simulate.ts";

/** Asserts |got − expected| ≤ rel·|expected| (or ≤ rel when expected = 0), printing got, expected and diff. */
export function assertRel(got: number, expected: number, rel: number, what: string): void {
  const diff = got - expected;
  const bound = expected === 0 ? rel : rel * Math.abs(expected);
  if (!(Math.abs(diff) <= bound)) {
    throw new Error(
      `${what}: got ${got}, expected ${expected}, diff ${diff} (relative ${diff / (expected || 1)}), ` +
        `tolerance ${rel} relative`,
    );
  }
}

/** Asserts |got − expected| ≤ abs, printing got, expected and diff. */
export function assertAbs(got: number, expected: number, abs: number, what: string): void {
  const diff = got - expected;
  if (!(Math.abs(diff) <= abs)) {
    throw new Error(`${what}: got ${got}, expected ${expected}, diff ${diff}, tolerance ${abs} absolute`);
  }
}

/** Asserts got ≤ limit, printing both. */
export function assertBelow(got: number, limit: number, what: string): void {
  if (!(got <= limit)) throw new Error(`${what}: got ${got}, expected ≤ ${limit}`);
}

/** A frame copied out of the engine's reused buffers. */
export interface SavedFrame {
  index: number;
  t: number;
  n: number;
  id: Int32Array;
  x: Float64Array;
  y: Float64Array;
  g: Float64Array;
  diagnostics: Record<string, number>;
}

export interface RunRecord {
  frames: SavedFrame[];
  events: EngineEvent[];
  summary: EngineRunSummary;
}

export const DEFAULT_STATE = [0x12345678, 0x9abcdef0, 0x0fedcba9, 0x87654321] as const;

/** Parses `params` with the engine schema and runs one realisation, copying every frame. */
export function run(
  params: unknown,
  controls: Partial<RunControls> & { duration: number; sampleInterval: number },
  state: readonly [number, number, number, number] = DEFAULT_STATE,
): RunRecord {
  return runParsed(pointVortexParamsSchema.parse(params), controls, state);
}

/** Runs already-built parameters (bypassing the schema, for guard tests). */
export function runParsed(
  params: PointVortexParams,
  controls: Partial<RunControls> & { duration: number; sampleInterval: number },
  state: readonly [number, number, number, number] = DEFAULT_STATE,
): RunRecord {
  const frames: SavedFrame[] = [];
  const events: EngineEvent[] = [];
  const summary = simulate({
    params,
    controls: { tolerance: 1e-10, maxDistance: 1e6, ...controls },
    rng: RandomStream.fromState(state),
  }, {
    frame(f) {
      frames.push({
        index: f.index,
        t: f.t,
        n: f.n,
        id: f.id.slice(0, f.n),
        x: f.x.slice(0, f.n),
        y: f.y.slice(0, f.n),
        g: f.circulation!.slice(0, f.n),
        diagnostics: { ...f.diagnostics },
      });
    },
    event(e) {
      events.push(e);
    },
  });
  return { frames, events, summary };
}

/** Parameters for an explicit configuration [x, y, Γ][] with optional overrides. */
export function explicit(
  vortices: readonly (readonly [number, number, number])[],
  extra: object = {},
): unknown {
  return {
    initial: { kind: "explicit", vortices: vortices.map(([x, y, circulation]) => ({ x, y, circulation })) },
    ...extra,
  };
}

/** Runs `fn` and returns the EngineFailure it throws (fails if it throws nothing or something else). */
export function expectFailure(fn: () => unknown): EngineFailure {
  try {
    fn();
  } catch (e) {
    if (e instanceof EngineFailure) return e;
    throw new Error(`expected an EngineFailure, got ${e}`);
  }
  throw new Error("expected an EngineFailure, but the call returned normally");
}
