/** Test helpers for the imported-data engines (private; used by the `_test.ts` files of this folder). */
import {
  type EngineEvent,
  EngineFailure,
  type Frame,
  type FrameSink,
  type RunControls,
} from "../contract.ts";
import type { Engine } from "../contract.ts";
import { RandomStream } from "../random.ts";
import type { ByteSource } from "./text_lines.ts";

/** A byte source over a fixed buffer. */
export function bytesSource(bytes: Uint8Array): ByteSource {
  let offset = 0;
  return {
    read(p: Uint8Array): Promise<number | null> {
      if (offset >= bytes.length) return Promise.resolve(null);
      const n = Math.min(p.length, bytes.length - offset);
      p.set(bytes.subarray(offset, offset + n));
      offset += n;
      return Promise.resolve(n);
    },
  };
}

/** A frame copied out of the engine's reused buffers (arrays trimmed to n; diagnostics dropped). */
export type CopiedFrame = Omit<Frame, "diagnostics">;

export function copyFrame(f: Frame): CopiedFrame {
  const n = f.n;
  return {
    index: f.index,
    t: f.t,
    n,
    id: f.id.slice(0, n),
    x: f.x.slice(0, n),
    y: f.y.slice(0, n),
    z: f.z === null ? null : f.z.slice(0, n),
    circulation: f.circulation === null ? null : f.circulation.slice(0, n),
    loop: f.loop === null ? null : f.loop.slice(0, n),
    marker: f.marker === null ? null : f.marker.slice(0, n),
  };
}

/** A sink that keeps copies of every frame and event. */
export function captureSink(): FrameSink & { frames: CopiedFrame[]; events: EngineEvent[] } {
  const frames: CopiedFrame[] = [];
  const events: EngineEvent[] = [];
  return {
    frames,
    events,
    frame: (f) => void frames.push(copyFrame(f)),
    event: (e) => void events.push(e),
  };
}

export function controls(duration: number, sampleInterval: number, maxDistance = 1e6): RunControls {
  return { duration, sampleInterval, tolerance: 1e-9, maxDistance };
}

export interface RunResult {
  readonly frames: CopiedFrame[];
  readonly events: EngineEvent[];
  readonly scalars: Readonly<Record<string, number>>;
}

/** Parses `params` with the engine's schema and runs realisation `index` into a capturing sink. */
export async function runEngine<P>(
  engine: Engine<P>,
  params: unknown,
  runControls: RunControls,
  index = 0,
): Promise<RunResult> {
  const parsed = engine.paramsSchema.parse(params);
  const sink = captureSink();
  const summary = await engine.run(
    {
      params: parsed,
      controls: runControls,
      rng: RandomStream.fromState([1, 2, 3, 4]),
      realisationIndex: index,
    },
    sink,
  );
  return { frames: sink.frames, events: sink.events, scalars: summary.scalars };
}

/**
 * Runs and expects an `EngineFailure` of `kind` whose message contains every one of `parts`; returns the message
 * (printed, so the test log shows what a user would read).
 */
export async function expectFailure<P>(
  engine: Engine<P>,
  params: unknown,
  runControls: RunControls,
  parts: readonly string[],
  options: { index?: number; kind?: string } = {},
): Promise<string> {
  try {
    await runEngine(engine, params, runControls, options.index ?? 0);
  } catch (e) {
    if (!(e instanceof EngineFailure)) {
      throw new Error(`expected an EngineFailure, got ${(e as Error)?.name}: ${(e as Error)?.message}`);
    }
    const kind = options.kind ?? "invalid-state";
    if (e.kind !== kind) throw new Error(`expected failure kind '${kind}', got '${e.kind}': ${e.message}`);
    for (const p of parts) {
      if (!e.message.includes(p)) {
        throw new Error(`expected the message to contain '${p}', got: ${e.message}`);
      }
    }
    console.log(`  message: ${e.message}`);
    return e.message;
  }
  throw new Error(
    `expected the run to fail with a message containing ${JSON.stringify(parts)}; it succeeded`,
  );
}

/** Relative float check that prints got, expected and difference. */
export function assertClose(got: number, expected: number, rtol: number, what: string): void {
  const diff = Math.abs(got - expected);
  if (!(diff <= rtol * Math.abs(expected))) {
    throw new Error(
      `${what}: got ${got}, expected ${expected}, difference ${diff.toExponential(3)} exceeds rtol ${rtol}`,
    );
  }
}

/** Fails unless two frame lists are identical bit for bit (times, ids, positions and fields). */
export function assertSameFrames(
  got: readonly CopiedFrame[],
  expected: readonly CopiedFrame[],
  what: string,
): void {
  if (got.length !== expected.length) {
    throw new Error(`${what}: got ${got.length} frames, expected ${expected.length}`);
  }
  const same = (a: ArrayLike<number> | null, b: ArrayLike<number> | null) => {
    if (a === null || b === null) return a === b;
    if (a.length !== b.length) return false;
    for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) return false;
    return true;
  };
  for (let k = 0; k < expected.length; k++) {
    const g = got[k];
    const e = expected[k];
    for (const key of ["index", "t", "n"] as const) {
      if (!Object.is(g[key], e[key])) {
        throw new Error(`${what}: frame ${k} ${key}: got ${g[key]}, expected ${e[key]}`);
      }
    }
    for (const key of ["id", "x", "y", "z", "circulation", "loop", "marker"] as const) {
      if (!same(g[key], e[key])) {
        throw new Error(
          `${what}: frame ${k} (t = ${e.t}) column ${key} differs: got ${g[key]?.slice(0, 6)}…, expected ` +
            `${e[key]?.slice(0, 6)}…`,
        );
      }
    }
  }
}

/** Runs `fn` with a fresh temporary directory, removed afterwards. */
export async function withTempDir<T>(fn: (dir: string) => Promise<T>): Promise<T> {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-import-" });
  try {
    return await fn(dir);
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
}
