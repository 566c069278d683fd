/**
 * The round trip of the issue: a point-vortex realisation, exported in the frame export format and imported back
 * with `imported-tracks-2d`, gives the same stored observables as the original — here bit for bit, since the
 * export writes shortest round-trip decimals and the import reproduces the frames exactly.
 *
 * Both realisations go through `executeRealisation` (the code the runner's workers run): engine → classifier →
 * observables → encoded frames. The export side reads what the store would hold (encoded frame rows with their
 * labels), as `spindrift export` does.
 */
import { assert, assertEquals } from "../_assert.ts";
import type { Engine } from "../../engines/contract.ts";
import { pointVortexEngine } from "../../engines/point-vortex/mod.ts";
import { IMPORTED_ENGINES, importedTracks2dEngine, writeFramesCsv } from "../../engines/imported/mod.ts";
import { DEFAULT_CLASSIFICATION, observableIds } from "../../engines/observables/mod.ts";
import { executeRealisation, type RealisationTask } from "../../study/execute.ts";
import type { FrameRow } from "../../store/db.ts";
import { decodeFrame } from "../../store/frame_codec.ts";

// deno-lint-ignore no-explicit-any
const ENGINES: Engine<any>[] = [pointVortexEngine, ...IMPORTED_ENGINES];
const lookup = (id: string) => ENGINES.find((e) => e.id === id);

const CONTROLS = { duration: 2, sampleInterval: 0.05, tolerance: 1e-9, maxDistance: 1e6 };

function task(engine: Engine<unknown>, params: unknown): RealisationTask {
  return {
    engineId: engine.id,
    engineVersion: engine.version,
    params: engine.paramsSchema.parse(params),
    controls: CONTROLS,
    seedState: [0x6a09e667, 0xbb67ae85 | 0, 0x3c6ef372, 0xa54ff53a | 0],
    realisationIndex: 0,
    observables: { record: observableIds(), classification: DEFAULT_CLASSIFICATION },
  };
}

async function execute(t: RealisationTask) {
  const frames: FrameRow[] = [];
  const outcome = await executeRealisation(t, (f) => frames.push(...f), lookup);
  assertEquals(outcome.status, "done", `${t.engineId}: ${outcome.error}`);
  return { outcome, frames };
}

const sameNumbers = (a: ArrayLike<number>, b: ArrayLike<number>) =>
  a.length === b.length && Array.from(a).every((v, i) => Object.is(v, b[i]));

// Identity check (import(export(x)) = x): spindrift's own requirement; exactness rests on shortest round-trip
// decimal output (ECMA-262 Number::toString; Steele & White, PLDI 1990, doi:10.1145/93542.93559).
Deno.test("round trip: point-vortex realisation → export CSV → imported-tracks-2d gives identical stored observables", async () => {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-roundtrip-" });
  try {
    const original = await execute(task(pointVortexEngine, {
      domain: { kind: "unbounded" },
      initial: {
        kind: "random-cloud",
        count: 24,
        polarity: 0,
        shape: "uniform-disk",
        radius: 1,
        minSeparation: 0.05,
      },
      annihilationDistance: 0.02,
    }));
    assert(original.frames.length === 41, `expected 41 frames, got ${original.frames.length}`);

    // Export what the store holds: decoded frame rows, labels included.
    const path = `${dir}/pv.csv`;
    const file = await Deno.create(path);
    try {
      await writeFramesCsv(
        original.frames.map((row) => {
          const c = decodeFrame(row.layout, row.data, row.n);
          return {
            t: row.t,
            n: row.n,
            id: c.id as Int32Array,
            x: c.x as Float64Array,
            y: c.y as Float64Array,
            circulation: c.circulation as Float64Array,
            label: c.label as Uint8Array,
          };
        }),
        file,
        { dimension: 2, comments: ["point-vortex-2d realisation 0, round-trip test"] },
      );
    } finally {
      file.close();
    }

    const imported = await execute(task(importedTracks2dEngine, { source: { file: path } }));

    // Stored frames: same k, t, n and the same bytes (positions, ids, circulations and the classifier's labels).
    assertEquals(imported.frames.length, original.frames.length);
    for (let k = 0; k < original.frames.length; k++) {
      const a = original.frames[k];
      const b = imported.frames[k];
      assertEquals([b.k, b.t, b.n, b.layout], [a.k, a.t, a.n, a.layout], `frame ${k}`);
      assert(sameNumbers(b.data, a.data), `frame ${k}: stored bytes differ`);
    }

    // Series: every observable series identical (diagnostics are the engine's own and are not exported).
    const names = Object.keys(original.outcome.series).filter((n) => !n.startsWith("diag.")).sort();
    assertEquals(Object.keys(imported.outcome.series).sort(), names);
    for (const name of names) {
      const a = original.outcome.series[name];
      const b = imported.outcome.series[name];
      assert(sameNumbers(b.t, a.t) && sameNumbers(b.v, a.v), `series ${name} differs`);
    }

    // Scalars: every scalar of the import except its own import.* counts equals the original's.
    const own = Object.keys(imported.outcome.scalars).filter((n) => !n.startsWith("import."));
    for (const name of own) {
      assert(
        Object.is(imported.outcome.scalars[name], original.outcome.scalars[name]),
        `scalar ${name}: got ${imported.outcome.scalars[name]}, original ${original.outcome.scalars[name]}`,
      );
    }

    // Observable events (classification decisions) identical; engine events differ by design (annihilation vs
    // track-end).
    const engineKinds = new Set([
      ...Object.keys(pointVortexEngine.capabilities.events),
      ...Object.keys(importedTracks2dEngine.capabilities.events),
    ]);
    const observed = (events: readonly { kind: string }[]) =>
      JSON.stringify(events.filter((e) => !engineKinds.has(e.kind)));
    assertEquals(observed(imported.outcome.events), observed(original.outcome.events));
    const list = names.join(", ");
    console.log(
      `  ${original.frames.length} frames, ${names.length} series (${list}), ${own.length} scalars: equal`,
    );
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});

Deno.test("round trip 3D: filament snapshots exported and imported through executeRealisation store the same points", async () => {
  const dir = await Deno.makeTempDir({ prefix: "spindrift-roundtrip3d-" });
  try {
    // Two vortex rings of 12 points, one drifting along z, with every third point a marker.
    const frames = Array.from({ length: 41 }, (_, k) => {
      const n = 24;
      const f = {
        t: k * CONTROLS.sampleInterval,
        n,
        id: new Int32Array(n),
        x: new Float64Array(n),
        y: new Float64Array(n),
        z: new Float64Array(n),
        loop: new Int32Array(n),
        marker: new Uint8Array(n),
      };
      for (let i = 0; i < n; i++) {
        const ring = i < 12 ? 0 : 1;
        const phi = (2 * Math.PI * (i % 12)) / 12 + 0.01 * k;
        const r = ring === 0 ? 1 : 0.2;
        f.id[i] = 100 * (ring + 1) + (i % 12);
        f.x[i] = r * Math.cos(phi) + (ring === 0 ? 0 : 0.5);
        f.y[i] = r * Math.sin(phi);
        f.z[i] = ring === 0 ? 0 : 0.3 * f.t;
        f.loop[i] = ring;
        f.marker[i] = i % 3 === 0 ? 1 : 0;
      }
      return f;
    });
    const path = `${dir}/rings.csv`;
    const file = await Deno.create(path);
    try {
      await writeFramesCsv(frames, file, { dimension: 3 });
    } finally {
      file.close();
    }
    const engine = IMPORTED_ENGINES[1];
    const imported = await execute(task(engine, { source: { file: path }, coreRadius: 1e-3 }));
    assertEquals(imported.frames.length, frames.length);
    for (let k = 0; k < frames.length; k++) {
      const row = imported.frames[k];
      const c = decodeFrame(row.layout, row.data, row.n);
      assertEquals(row.t, frames[k].t);
      for (const key of ["id", "x", "y", "z", "loop", "marker"] as const) {
        assert(sameNumbers(c[key], frames[k][key]), `frame ${k} column ${key} differs`);
      }
    }
  } finally {
    await Deno.remove(dir, { recursive: true });
  }
});
