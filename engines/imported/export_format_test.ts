import { deepStrictEqual as assertEquals } from "node:assert/strict";
import { type ExportFrame, formatExportNumber, writeFramesCsv } from "./export_format.ts";
import { importedFilaments3dEngine, importedTracks2dEngine } from "./engine.ts";
import { assertSameFrames, controls, type CopiedFrame, runEngine, withTempDir } from "./_test_helpers.ts";
import { Label } from "../observables/labels.ts";

/** Collects written bytes; accepts at most `max` bytes per call, like a short write of a file. */
function collector(max = Infinity) {
  const parts: Uint8Array[] = [];
  return {
    parts,
    write(chunk: Uint8Array): Promise<number> {
      const n = Math.min(max, chunk.length);
      parts.push(chunk.slice(0, n));
      return Promise.resolve(n);
    },
    text: () => new TextDecoder().decode(new Uint8Array(parts.flatMap((p) => [...p]))),
  };
}

// Doubles that stress decimal conversion: non-terminating binary fractions, -0, the smallest subnormal, the
// smallest normal, large exponents (IEEE 754-2008 §3.4; values from memory, checked by Number.MIN_VALUE).
const AWKWARD = [
  0.1 + 0.2,
  1 / 3,
  -0,
  5e-324,
  2.2250738585072014e-308,
  1e21,
  123456789.12345679,
  -1e-7,
  Math.PI,
];

function frame2d(k: number, dt: number, ids: number[], label: boolean): ExportFrame & CopiedFrame {
  const n = ids.length;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const circulation = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    x[i] = AWKWARD[(i + k) % AWKWARD.length] * (i % 2 === 0 ? 1 : 1e-3);
    y[i] = AWKWARD[(i + 2 * k + 3) % AWKWARD.length] * 1e-15;
    circulation[i] = i % 3 === 0 ? -1 : i % 3 === 1 ? 1 : 0.5;
  }
  return {
    index: k,
    t: k * dt,
    n,
    id: Int32Array.from(ids),
    x,
    y,
    z: null,
    circulation,
    loop: null,
    marker: null,
    label: label ? new Uint8Array(n).fill(Label.Evaporated) : null,
  };
}

// The export format is spindrift's own (export_format.ts); exactness rests on ECMA-262 Number::toString being a
// shortest round-trip conversion (Steele & White 1990; Gay 1990).
Deno.test("formatExportNumber: every test double reads back to itself, -0 keeps its sign", () => {
  for (const v of AWKWARD) {
    const back = Number(formatExportNumber(v));
    if (!Object.is(back, v)) throw new Error(`${v} → '${formatExportNumber(v)}' → ${back}`);
  }
  assertEquals(formatExportNumber(-0), "-0");
  assertEquals(formatExportNumber(0.30000000000000004), "0.30000000000000004");
});

Deno.test("writeFramesCsv: header, rows, labels, comments and the empty-frame row (2D)", async () => {
  const out = collector();
  const f0: ExportFrame = {
    t: 0,
    n: 2,
    id: new Int32Array([3, 4]),
    x: new Float64Array([0.5, -0]),
    y: new Float64Array([1e-7, 2]),
    circulation: new Float64Array([1, -1]),
    label: new Uint8Array([Label.Main, Label.Stray]),
  };
  const f1: ExportFrame = { ...f0, t: 0.25, n: 0 };
  const r = await writeFramesCsv([f0, f1], out, { dimension: 2, comments: ["spindrift export"] });
  assertEquals(r, { frames: 2, rows: 2 });
  assertEquals(
    out.text(),
    "# spindrift export\nt,id,x,y,circulation,label\n0,3,0.5,1e-7,1,main\n0,4,-0,2,-1,stray\n0.25,,,,,\n",
  );
});

Deno.test("writeFramesCsv: 3D rows carry loop order and markers; short writes are completed", async () => {
  const out = collector(5);
  const f: ExportFrame = {
    t: 1,
    n: 4,
    id: new Int32Array([7, 8, 9, 10]),
    x: new Float64Array([1, 0, -1, 0]),
    y: new Float64Array([0, 1, 0, -1]),
    z: new Float64Array([0, 0, 0, 0]),
    loop: new Int32Array([2, 2, 2, 5]),
    marker: new Uint8Array([1, 0, 0, 1]),
  };
  await writeFramesCsv([f], out, { dimension: 3, realisation: 4 });
  assertEquals(
    out.text(),
    "realisation,t,id,x,y,z,loop,order,marker,label\n" +
      "4,1,7,1,0,0,2,0,1,\n4,1,8,0,1,0,2,1,0,\n4,1,9,-1,0,0,2,2,0,\n4,1,10,0,-1,0,5,0,1,\n",
  );
});

Deno.test("import(export(frames)) is bit-identical in 2D, awkward doubles, vanishing vortices and an empty frame included", async () => {
  await withTempDir(async (dir) => {
    const dt = 0.1;
    const frames = [
      frame2d(0, dt, [1, 2, 3, 4, 5, 6, 7], true),
      frame2d(1, dt, [1, 2, 3, 4, 5, 6, 7], true),
      frame2d(2, dt, [1, 2, 5, 6, 7], false), // 3 and 4 ended
      frame2d(3, dt, [7, 1, 6], false), // order changes, 2 and 5 ended
      frame2d(4, dt, [], false),
      frame2d(5, dt, [], false),
    ];
    const path = `${dir}/export.csv`;
    const file = await Deno.create(path);
    try {
      await writeFramesCsv(frames, file, { dimension: 2, comments: ["round trip"] });
    } finally {
      file.close();
    }
    const r = await runEngine(importedTracks2dEngine, { source: { file: path } }, controls(0.5, dt, 1e25));
    assertSameFrames(r.frames, frames, "import(export(x))");
    const t3 = 3 * dt;
    const ended = [[0.1, 3], [0.1, 4], [0.2, 2], [0.2, 5], [t3, 1], [t3, 6], [t3, 7]];
    assertEquals(r.events.map((e) => [e.t, e.ids[0]]), ended);
  });
});

Deno.test("import(export(frames)) is bit-identical in 3D, several realisations sharing one file", async () => {
  await withTempDir(async (dir) => {
    const ring = (k: number, r: number, loopId: number, start: number, n: number, dz: number) => {
      const phi = Array.from({ length: n }, (_, i) => (2 * Math.PI * i) / n + 0.1 * k);
      return {
        id: phi.map((_, i) => start + i),
        x: phi.map((p) => r * Math.cos(p)),
        y: phi.map((p) => r * Math.sin(p)),
        z: phi.map(() => dz * k),
        loop: phi.map(() => loopId),
        marker: phi.map((_, i) => (i % 3 === 0 ? 1 : 0)),
      };
    };
    const make = (real: number) =>
      [0, 1, 2].map((k): ExportFrame & CopiedFrame => {
        const a = ring(k, 1 + real, 4, 100, 7, 0.01);
        const b = ring(k, 0.3, 9, 200, k === 2 ? 6 : 7, -0.2);
        const cat = <T>(p: T[], q: T[]) => [...p, ...q];
        return {
          index: k,
          t: k * 0.5,
          n: a.id.length + b.id.length,
          id: Int32Array.from(cat(a.id, b.id)),
          x: Float64Array.from(cat(a.x, b.x)),
          y: Float64Array.from(cat(a.y, b.y)),
          z: Float64Array.from(cat(a.z, b.z)),
          circulation: null,
          loop: Int32Array.from(cat(a.loop, b.loop)),
          marker: Uint8Array.from(cat(a.marker, b.marker)),
        };
      });
    const path = `${dir}/filaments.csv`;
    const file = await Deno.create(path);
    try {
      await writeFramesCsv(make(0), file, { dimension: 3, realisation: 0 });
      await writeFramesCsv(make(1), file, { dimension: 3, realisation: 1, header: false });
    } finally {
      file.close();
    }
    for (const real of [0, 1]) {
      const params = { source: { file: path, realisationColumn: "realisation" }, coreRadius: 0.01 };
      const r = await runEngine(importedFilaments3dEngine, params, controls(1, 0.5), real);
      assertSameFrames(r.frames, make(real), `3D realisation ${real}`);
      // Marker 206 (loop 9, position 6) is gone in frame 2: one track-end, at the last time seen (0.5).
      assertEquals(r.events.map((e) => [e.t, e.ids[0]]), [[0.5, 206]]);
    }
  });
});
