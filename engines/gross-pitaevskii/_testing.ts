/**
 * Test helpers of the Gross–Pitaevskii engine (private): float checks that print got, expected and
 * difference, a deterministic stream, and a sink that copies frames and events.
 */
import assert from "node:assert/strict";
import type { EngineEvent, FieldSnapshot, Frame, FrameSink } from "../contract.ts";
import { RandomStream } from "../random.ts";

/** Asserts |got − expected| ≤ rtol·|expected| (or ≤ rtol when expected is 0), printing the figures. */
export function assertRelClose(got: number, expected: number, rtol: number, what = "value"): void {
  const diff = got - expected;
  const scale = expected === 0 ? 1 : Math.abs(expected);
  const rel = Math.abs(diff) / scale;
  assert.ok(
    Number.isFinite(got) && rel <= rtol,
    `${what}: got ${got}, expected ${expected}, diff ${diff} (rel ${rel.toExponential(3)}, rtol ${rtol})`,
  );
}

/** Asserts |got − expected| ≤ atol, printing the figures. */
export function assertAbsClose(got: number, expected: number, atol: number, what = "value"): void {
  const diff = got - expected;
  assert.ok(
    Number.isFinite(got) && Math.abs(diff) <= atol,
    `${what}: got ${got}, expected ${expected}, diff ${diff} (atol ${atol})`,
  );
}

/** A fixed stream for tests. */
export function testStream(seed = 1): RandomStream {
  return RandomStream.fromState([seed, 0x9e37, 0x79b9, 0x7f4a]);
}

/** A frame copied out of the engine's reused buffers. */
export interface SavedFrame {
  readonly index: number;
  readonly t: number;
  readonly n: number;
  readonly id: Int32Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly circulation: Float64Array;
  readonly diagnostics: Record<string, number>;
}

/** A sink that keeps copies of everything it receives. */
export function collectingSink(): FrameSink & {
  frames: SavedFrame[];
  events: EngineEvent[];
  snapshots: FieldSnapshot[];
} {
  const frames: SavedFrame[] = [];
  const events: EngineEvent[] = [];
  const snapshots: FieldSnapshot[] = [];
  return {
    frames,
    events,
    snapshots,
    frame(f: Frame) {
      frames.push({
        index: f.index,
        t: f.t,
        n: f.n,
        id: f.id.slice(0, f.n),
        x: f.x.slice(0, f.n),
        y: f.y.slice(0, f.n),
        circulation: (f.circulation ?? new Float64Array(f.n)).slice(0, f.n),
        diagnostics: { ...f.diagnostics },
      });
    },
    event(e: EngineEvent) {
      events.push(e);
    },
    snapshot(s: FieldSnapshot) {
      snapshots.push(s);
    },
  };
}

/** Fills an interleaved complex array with uniform deviates in [−½, ½) (deterministic). */
export function randomComplex(length: number, seed = 1): Float64Array {
  const rng = testStream(seed);
  const a = new Float64Array(2 * length);
  for (let i = 0; i < a.length; i++) a[i] = rng.uniform() - 0.5;
  return a;
}
