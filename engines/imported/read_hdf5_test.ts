/**
 * HDF5 import: the same data written as CSV and as HDF5 (with h5wasm itself) give identical frames, and every
 * kind of bad HDF5 input has a clear message (file, dataset, index).
 */
import { deepStrictEqual as assertEquals } from "node:assert/strict";
import { importedTracks2dEngine } from "./engine.ts";
import { HDF5_CHUNK_ROWS, hdf5Reason, loadH5 } from "./read_hdf5.ts";
import { assertSameFrames, controls, expectFailure, runEngine, withTempDir } from "./_test_helpers.ts";
import { RandomStream } from "../random.ts";

type Columns = {
  t: Float64Array;
  id: Int32Array;
  x: Float64Array;
  y: Float64Array;
  circulation: Float64Array;
};

/** N vortices × T times of random positions (awkward doubles), rows sorted by time. */
function table(n: number, times: number, dt: number, seed: number): Columns {
  const rng = RandomStream.fromState([seed, 2, 3, 4]);
  const rows = n * times;
  const c: Columns = {
    t: new Float64Array(rows),
    id: new Int32Array(rows),
    x: new Float64Array(rows),
    y: new Float64Array(rows),
    circulation: new Float64Array(rows),
  };
  for (let k = 0, r = 0; k < times; k++) {
    for (let i = 0; i < n; i++, r++) {
      c.t[r] = k * dt;
      c.id[r] = 1000 + i;
      c.x[r] = (rng.uniform() - 0.5) * 10 / 3;
      c.y[r] = (rng.normal()) * 1e-7;
      c.circulation[r] = i % 2 === 0 ? 1 : -1;
    }
  }
  return c;
}

function toCsv(c: Columns): string {
  const lines = ["t,id,x,y,circulation"];
  for (let r = 0; r < c.t.length; r++) {
    lines.push(`${c.t[r]},${c.id[r]},${c.x[r]},${c.y[r]},${c.circulation[r]}`);
  }
  return lines.join("\n") + "\n";
}

async function writeH5(
  path: string,
  groups: Record<string, Record<string, ArrayLike<unknown>>>,
): Promise<void> {
  const h5 = await loadH5();
  const f = new h5.File(path, "w");
  try {
    for (const [group, datasets] of Object.entries(groups)) {
      const g = group === "/" ? f : f.create_group(group);
      for (const [name, data] of Object.entries(datasets)) {
        // deno-lint-ignore no-explicit-any
        g.create_dataset({ name, data: data as any });
      }
    }
  } finally {
    f.close();
  }
}

// Cross-check required by the issue: the same data through two independent containers (text vs HDF5 binary)
// must give identical frames (identity check; common practice, no source).
Deno.test("imported-tracks-2d: HDF5 and CSV holding the same data give identical frames (across slice boundaries)", async () => {
  await withTempDir(async (dir) => {
    // 120 vortices × 600 times = 72 000 rows > one HDF5 slice of 65 536 rows.
    const c = table(120, 600, 0.05, 11);
    if (c.t.length <= HDF5_CHUNK_ROWS) throw new Error("the table must span more than one HDF5 slice");
    await Deno.writeTextFile(`${dir}/a.csv`, toCsv(c));
    // ids as 64-bit integers, positions as doubles.
    const ids64 = BigInt64Array.from(c.id, (v) => BigInt(v));
    await writeH5(`${dir}/a.h5`, {
      "/tracks": { t: c.t, id: ids64, x: c.x, y: c.y, circulation: c.circulation },
    });
    const run = controls(29.9, 0.1);
    const fromCsv = await runEngine(importedTracks2dEngine, { source: { file: `${dir}/a.csv` } }, run);
    const fromH5 = await runEngine(importedTracks2dEngine, {
      source: { file: `${dir}/a.h5`, group: "/tracks" },
    }, run);
    assertEquals(fromCsv.frames.length, 300);
    assertSameFrames(fromH5.frames, fromCsv.frames, "HDF5 vs CSV");
    assertEquals(fromH5.scalars, fromCsv.scalars);
  });
});

Deno.test("imported-tracks-2d: HDF5 realisations by group pattern or by a realisation dataset", async () => {
  await withTempDir(async (dir) => {
    const a = table(4, 5, 0.5, 1);
    const b = table(4, 5, 0.5, 2);
    await writeH5(`${dir}/groups.h5`, { "/runs": {}, "/runs/r0": { ...a }, "/runs/r1": { ...b } });
    const both = (key: keyof Columns) => {
      const out = new Float64Array(a[key].length * 2);
      out.set(a[key]);
      out.set(b[key], a[key].length);
      return out;
    };
    const run = new Int32Array(a.t.length * 2).map((_, i) => (i < a.t.length ? 1 : 2));
    await writeH5(`${dir}/flat.h5`, {
      "/": {
        run,
        t: both("t"),
        id: both("id"),
        x: both("x"),
        y: both("y"),
        circulation: both("circulation"),
      },
    });
    const C = controls(2, 0.5);
    for (const index of [0, 1]) {
      const g = await runEngine(
        importedTracks2dEngine,
        { source: { file: `${dir}/groups.h5`, group: "/runs/r{index}" } },
        C,
        index,
      );
      const f = await runEngine(
        importedTracks2dEngine,
        { source: { file: `${dir}/flat.h5`, realisationColumn: "run", realisationOffset: 1 } },
        C,
        index,
      );
      assertSameFrames(f.frames, g.frames, `realisation ${index}`);
      assertEquals(g.frames[1].x[0], (index === 0 ? a : b).x[4]);
    }
  });
});

Deno.test("imported-tracks-2d: bad HDF5 input — dataset path, group, not HDF5, lengths, types, shape, NaN", async () => {
  await withTempDir(async (dir) => {
    const c = table(3, 3, 0.5, 5);
    const C = controls(1, 0.5);
    const file = `${dir}/d.h5`;
    const x = c.x.slice();
    x[4] = Number.NaN;
    await writeH5(file, {
      "/good": { ...c },
      "/short": { ...c, y: c.y.slice(0, 8) },
      "/text": { ...c, x: Array.from(c.x, String) },
      "/nan": { ...c, x },
    });
    await expectFailure(
      importedTracks2dEngine,
      { source: { file, group: "/good" }, columns: { x: "X" } },
      C,
      [
        `${file}: dataset '/good/X' (columns.x) not found (did you mean 'x'?)`,
        "'/good' holds 'circulation', 'id', 't', 'x', 'y'",
      ],
    );
    await expectFailure(importedTracks2dEngine, { source: { file, group: "/god" } }, C, [
      `${file}: group '/god' (source.group) not found (did you mean 'good'?)`,
    ]);
    await expectFailure(importedTracks2dEngine, { source: { file, group: "/short" } }, C, [
      `${file}: dataset '/short/y' has 8 entries, '/short/t' has 9 (unequal point counts`,
    ]);
    await expectFailure(importedTracks2dEngine, { source: { file, group: "/text" } }, C, [
      `${file}: dataset '/text/x' (columns.x) holds string values, expected numbers`,
    ]);
    const wide = `${dir}/wide.h5`;
    const h5 = await loadH5();
    const w = new h5.File(wide, "w");
    for (const name of ["t", "id", "y", "circulation"]) w.create_dataset({ name, data: new Float64Array(3) });
    w.create_dataset({ name: "x", data: new Float64Array(6), shape: [3, 2] });
    w.close();
    await expectFailure(importedTracks2dEngine, { source: { file: wide } }, C, [
      `${wide}: dataset '/x' (columns.x) has shape [3, 2], expected one value per row (a 1-D dataset)`,
    ]);
    await expectFailure(importedTracks2dEngine, { source: { file, group: "/nan" } }, C, [
      `${file} dataset '/nan/x' index 4: got NaN, expected a finite number`,
    ]);
    const notH5 = `${dir}/fake.h5`;
    await Deno.writeTextFile(notH5, "t,id,x,y\n");
    await expectFailure(importedTracks2dEngine, { source: { file: notH5 } }, C, [
      `cannot read '${notH5}' as HDF5: file signature not found`,
    ]);
    await expectFailure(importedTracks2dEngine, { source: { file: `${dir}/missing.h5` } }, C, [
      `cannot open '${dir}/missing.h5': no such file`,
    ]);
  });
});

Deno.test("hdf5Reason: keeps the innermost frame of an HDF5 error stack", () => {
  const stack = "HDF5-DIAG: Error detected in HDF5 (2.0.0):\n" +
    "  #000: H5F.c line 821 in H5Fopen(): unable to synchronously open file\n    major: File accessibility\n" +
    "  #006: H5Fsuper.c line 388 in H5F__super_read(): file signature not found\n    minor: Not an HDF5 file\n";
  assertEquals(hdf5Reason(new Error(stack)), "file signature not found");
  assertEquals(hdf5Reason(new Error("plain")), "plain");
});
