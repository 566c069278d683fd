/**
 * End-to-end tests of the imported-data engines on real files: every kind of malformed input gets a message
 * that names the file, the row (or dataset and index), the column, the bad value and what was expected.
 */
import { deepStrictEqual as assertEquals } from "node:assert/strict";
import { importedFilaments3dEngine, importedTracks2dEngine } from "./engine.ts";
import { assertSameFrames, controls, expectFailure, runEngine, withTempDir } from "./_test_helpers.ts";

const GOOD_CSV = "t,id,x,y,circulation\n" +
  "0,1,0.5,0,1\n0,2,-0.5,0,-1\n" +
  "0.5,1,0.5,0.25,1\n0.5,2,-0.5,0.25,-1\n" +
  "1,1,0.5,0.5,1\n1,2,-0.5,0.5,-1\n";

const C = controls(1, 0.5);

async function csvCase(dir: string, name: string, text: string): Promise<string> {
  const path = `${dir}/${name}`;
  await Deno.writeTextFile(path, text);
  return path;
}

// Message contents are spindrift's own specification (issue: "file and row, the column, the bad value and what
// was expected"); common practice, no source.
Deno.test("imported-tracks-2d: a well-formed CSV gives its frames, with ids, positions and circulations", async () => {
  await withTempDir(async (dir) => {
    const file = await csvCase(dir, "ok.csv", GOOD_CSV);
    const r = await runEngine(importedTracks2dEngine, { source: { file } }, C);
    assertEquals(r.frames.map((f) => [f.index, f.t, f.n]), [[0, 0, 2], [1, 0.5, 2], [2, 1, 2]]);
    assertEquals([...r.frames[2].y], [0.5, 0.5]);
    assertEquals([...r.frames[0].circulation!], [1, -1]);
    assertEquals(r.scalars, { "import.rows": 6, "import.record_times": 3 });
  });
});

Deno.test("imported-tracks-2d: non-numeric value → file:line, column, text, 'expected a number'", async () => {
  await withTempDir(async (dir) => {
    const file = await csvCase(dir, "bad.csv", GOOD_CSV.replace("0.5,0.25,1", "abc,0.25,1"));
    await expectFailure(importedTracks2dEngine, { source: { file } }, C, [
      `${file}:4 column 'x': got 'abc', expected a number`,
    ]);
    const empty = await csvCase(dir, "empty.csv", GOOD_CSV.replace("-0.5,0.25,-1", "-0.5,,-1"));
    await expectFailure(importedTracks2dEngine, { source: { file: empty } }, C, [
      `${empty}:5 column 'y': got '' (an empty field), expected a number`,
    ]);
  });
});

Deno.test("imported-tracks-2d: missing column → header line, the column, the mapping, what the header has", async () => {
  await withTempDir(async (dir) => {
    const file = await csvCase(dir, "nocirc.csv", GOOD_CSV.replace("circulation", "Circulation"));
    await expectFailure(importedTracks2dEngine, { source: { file } }, C, [
      `${file}:1 header: no column 'circulation' (columns.circulation) (did you mean 'Circulation'?)`,
      "the header has 't', 'id', 'x', 'y', 'Circulation'",
    ]);
  });
});

Deno.test("imported-tracks-2d: time going backwards → the row, the time and the earlier time", async () => {
  await withTempDir(async (dir) => {
    const file = await csvCase(dir, "back.csv", GOOD_CSV + "0.75,1,0,0,1\n");
    await expectFailure(importedTracks2dEngine, { source: { file } }, controls(1.5, 0.5), [
      `${file}:8 column 't': got 0.75, expected ≥ 1`,
      "time goes backwards",
    ]);
  });
});

Deno.test("imported-tracks-2d: duplicate id in a frame → both rows, the id and the time", async () => {
  await withTempDir(async (dir) => {
    const file = await csvCase(dir, "dup.csv", GOOD_CSV.replace("0.5,2,-0.5,0.25,-1", "0.5,1,-0.5,0.25,-1"));
    await expectFailure(importedTracks2dEngine, { source: { file } }, C, [
      `${file}:5 column 'id': id 1 appears twice at t = 0.5 (also ${file}:4)`,
    ]);
  });
});

Deno.test("imported-tracks-2d: NaN → file:line, column, 'expected a finite number'", async () => {
  await withTempDir(async (dir) => {
    const file = await csvCase(dir, "nan.csv", GOOD_CSV.replace("1,1,0.5,0.5,1", "1,1,NaN,0.5,1"));
    await expectFailure(importedTracks2dEngine, { source: { file } }, C, [
      `${file}:6 column 'x': got NaN, expected a finite number`,
    ]);
  });
});

Deno.test("imported-tracks-2d: unequal field counts (CSV) and array lengths (JSON lines) are refused", async () => {
  await withTempDir(async (dir) => {
    const file = await csvCase(dir, "short.csv", GOOD_CSV.replace("0.5,1,0.5,0.25,1", "0.5,1,0.5,0.25"));
    await expectFailure(importedTracks2dEngine, { source: { file } }, C, [
      `${file}:4: the row has 4 fields, expected 5 (as in the header)`,
    ]);
    const jl = `${dir}/frames.jsonl`;
    await Deno.writeTextFile(
      jl,
      '{"t":0,"id":[1,2],"x":[0.5,-0.5],"y":[0,0],"circulation":[1,-1]}\n' +
        '{"t":0.5,"id":[1,2],"x":[0.5,-0.5],"y":[0.25],"circulation":[1,-1]}\n',
    );
    await expectFailure(importedTracks2dEngine, { source: { file: jl } }, C, [
      `${jl}:2 key 'y': the array has 1 entry, key 'id' has 2 entries (unequal point counts`,
    ]);
  });
});

Deno.test("imported engines: a missing file fails with its path; other realisations still read theirs", async () => {
  await withTempDir(async (dir) => {
    await csvCase(dir, "r0.csv", GOOD_CSV);
    const params = { source: { files: `${dir}/r{index}.csv` } };
    const ok = await runEngine(importedTracks2dEngine, params, C, 0);
    assertEquals(ok.frames.length, 3);
    await expectFailure(importedTracks2dEngine, params, C, [`cannot open '${dir}/r1.csv': no such file`], {
      index: 1,
    });
    await expectFailure(importedTracks2dEngine, { source: { files: [`${dir}/r0.csv`] } }, C, [
      "no file for realisation 1: source.files lists 1 file (realisations 0–0)",
    ], { index: 1 });
  });
});

Deno.test("imported-tracks-2d: one file with a realisation column; a corrupt realisation fails alone", async () => {
  await withTempDir(async (dir) => {
    const rows = GOOD_CSV.trim().split("\n").slice(1);
    const body = rows.map((r) => `1,${r}`).join("\n") + "\n" +
      rows.map((r) => `2,${r.replace(",0.5,0,1", ",NaN,0,1")}`).join("\n") + "\n";
    const file = await csvCase(dir, "all.csv", "run,t,id,x,y,circulation\n" + body);
    const params = { source: { file, realisationColumn: "run", realisationOffset: 1 } };
    const r0 = await runEngine(importedTracks2dEngine, params, C, 0);
    const single = await runEngine(importedTracks2dEngine, {
      source: { file: await csvCase(dir, "one.csv", GOOD_CSV) },
    }, C);
    assertSameFrames(r0.frames, single.frames, "realisation 0 of the shared file");
    await expectFailure(importedTracks2dEngine, params, C, [`${file}:8 column 'x': got NaN`], { index: 1 });
    await expectFailure(importedTracks2dEngine, params, C, [`${file} (rows with run = 3): no data rows`], {
      index: 2,
    });
  });
});

Deno.test("imported-tracks-2d: TSV, whitespace and headerless files with column positions", async () => {
  await withTempDir(async (dir) => {
    const reference = await runEngine(importedTracks2dEngine, {
      source: { file: await csvCase(dir, "a.csv", GOOD_CSV) },
    }, C);
    const tsv = await csvCase(dir, "a.tsv", GOOD_CSV.replaceAll(",", "\t"));
    assertSameFrames(
      (await runEngine(importedTracks2dEngine, { source: { file: tsv } }, C)).frames,
      reference.frames,
      "tsv",
    );
    const dat = await csvCase(
      dir,
      "a.dat",
      GOOD_CSV.split("\n").slice(1).map((l) => l.replaceAll(",", "   ")).join("\n"),
    );
    const headerless = {
      source: { file: dat, format: "csv", delimiter: "whitespace", header: false },
      columns: { t: 1, id: 2, x: 3, y: 4, circulation: 5 },
    };
    assertSameFrames(
      (await runEngine(importedTracks2dEngine, headerless, C)).frames,
      reference.frames,
      "whitespace",
    );
  });
});

Deno.test("imported-tracks-2d: column mapping with units converts to study units", async () => {
  await withTempDir(async (dir) => {
    // Times in ms, positions in µm with study unit ℓ = 2 µm, time unit 0.5 s; circulation as sign.
    const text = "time_ms,track,x_um,y_um,s\n" +
      "0,1,1,2,+1\n0,2,-1,2,-1\n500,1,1,4,1\n500,2,-1,4,-1\n";
    const file = await csvCase(dir, "units.csv", text);
    const params = {
      source: { file },
      columns: {
        t: { name: "time_ms", unit: "ms" },
        id: "track",
        x: { name: "x_um", unit: "um" },
        y: { name: "y_um", unit: "um" },
        circulation: { name: "s", unit: "sign" },
      },
      units: { length: { value: 2, unit: "um" }, time: { value: 0.5, unit: "s" } },
    };
    const r = await runEngine(importedTracks2dEngine, params, controls(1, 1));
    // SI prefixes (BIPM SI Brochure 9th ed., Table 7): 500 ms = 0.5 s = 1 study time unit; 4 µm = 2 ℓ.
    assertEquals(r.frames.map((f) => f.t), [0, 1]);
    assertEquals([...r.frames[1].x, ...r.frames[1].y], [0.5, -0.5, 2, 2]);
  });
});

Deno.test("imported-tracks-2d: JSON lines rows and frame lines give the same frames as the CSV", async () => {
  await withTempDir(async (dir) => {
    const reference = await runEngine(importedTracks2dEngine, {
      source: { file: await csvCase(dir, "a.csv", GOOD_CSV) },
    }, C);
    const lines = GOOD_CSV.trim().split("\n").slice(1).map((l) => {
      const [t, id, x, y, c] = l.split(",").map(Number);
      return JSON.stringify({ t, id, x, y, circulation: c });
    });
    const rows = `${dir}/rows.jsonl`;
    await Deno.writeTextFile(rows, lines.join("\n") + "\n");
    assertSameFrames(
      (await runEngine(importedTracks2dEngine, { source: { file: rows } }, C)).frames,
      reference.frames,
      "rows",
    );
    const frames = `${dir}/frames.ndjson`;
    await Deno.writeTextFile(
      frames,
      '# frame lines\n{"t":0,"id":[1,2],"x":[0.5,-0.5],"y":[0,0],"circulation":[1,-1]}\n' +
        '{"t":0.5,"id":[1,2],"x":[0.5,-0.5],"y":[0.25,0.25],"circulation":[1,-1]}\n' +
        '{"t":1,"id":[1,2],"x":[0.5,-0.5],"y":[0.5,0.5],"circulation":[1,-1]}\n',
    );
    assertSameFrames(
      (await runEngine(importedTracks2dEngine, { source: { file: frames } }, C)).frames,
      reference.frames,
      "frames",
    );
  });
});

Deno.test("imported-tracks-2d: JSON lines errors name line, key and value", async () => {
  await withTempDir(async (dir) => {
    const f = `${dir}/bad.jsonl`;
    await Deno.writeTextFile(f, '{"t":0,"id":1,"x":"0.5","y":0,"circulation":1}\n');
    await expectFailure(importedTracks2dEngine, { source: { file: f } }, C, [
      `${f}:1 key 'x': got "0.5" (a string), expected a number`,
    ]);
    await Deno.writeTextFile(f, '{"t":0,"id":1,"x":NaN,"y":0,"circulation":1}\n');
    await expectFailure(importedTracks2dEngine, { source: { file: f } }, C, [
      `${f}:1: not valid JSON`,
      "JSON has no NaN or Infinity",
    ]);
    await Deno.writeTextFile(f, '{"t":0,"id":1,"x":0.5,"circulation":1}\n');
    await expectFailure(importedTracks2dEngine, { source: { file: f } }, C, [
      `${f}:1: key 'y' (columns.y) is missing; the object has 't', 'id', 'x', 'circulation'`,
    ]);
    await Deno.writeTextFile(f, '{"t":0,"id":[1,2],"x":[0.5,-0.5],"y":[0,null],"circulation":[1,-1]}\n');
    await expectFailure(importedTracks2dEngine, { source: { file: f } }, C, [
      `${f}:1 key 'y'[1]: got null, expected a number`,
    ]);
  });
});

Deno.test("imported-filaments-3d: a ring of markers imports loop by loop with the core radius converted", async () => {
  await withTempDir(async (dir) => {
    const lines = ["t,id,x,y,z,loop,order,marker"];
    for (const t of [0, 0.5, 1]) {
      for (let k = 5; k >= 0; k--) {
        const phi = (2 * Math.PI * k) / 6;
        lines.push(
          `${t},${100 + k},${Math.cos(phi)},${Math.sin(phi)},${t * 0.1},7,${k},${k % 2 === 0 ? 1 : 0}`,
        );
      }
    }
    const file = await csvCase(dir, "ring.csv", lines.join("\n") + "\n");
    const params = { source: { file }, coreRadius: { value: 1e-8, unit: "cm" }, units: { length: "um" } };
    const r = await runEngine(importedFilaments3dEngine, params, C);
    assertEquals(r.frames.length, 3);
    assertEquals([...r.frames[1].id], [100, 101, 102, 103, 104, 105]);
    assertEquals([...r.frames[1].marker!], [1, 0, 1, 0, 1, 0]);
    assertEquals(r.frames[2].z![0], 0.1);
    const parsed = importedFilaments3dEngine.paramsSchema.parse(params);
    // a₀ = 1e-8 cm = 1e-4 µm (BIPM SI Brochure, Table 7).
    assertEquals(importedFilaments3dEngine.scales!(parsed).coreRadius, 1e-4);
  });
});

Deno.test("imported engines: unreadable input — a directory, invalid UTF-8, an unclosed quote", async () => {
  await withTempDir(async (dir) => {
    await Deno.mkdir(`${dir}/d.csv`);
    await expectFailure(importedTracks2dEngine, { source: { file: `${dir}/d.csv` } }, C, [
      "it is a directory",
    ]);
    const bin = `${dir}/bin.csv`;
    await Deno.writeFile(
      bin,
      new Uint8Array([...new TextEncoder().encode("t,id,x,y,circulation\n"), 0xff, 0xfe]),
    );
    await expectFailure(importedTracks2dEngine, { source: { file: bin } }, C, [
      `${bin}: line 2 is not valid UTF-8`,
    ]);
    const q = await csvCase(dir, "q.csv", 't,id,x,y,circulation\n0,1,"0.5,0,1\n');
    await expectFailure(importedTracks2dEngine, { source: { file: q } }, C, [
      `${q}:2: a quoted field opened on line 2 is never closed`,
    ]);
  });
});

Deno.test("imported-filaments-3d: a missing optional column says how to declare it absent", async () => {
  await withTempDir(async (dir) => {
    const rows = ["t,id,x,y,z,loop,order"];
    for (let k = 0; k < 3; k++) rows.push(`0,${k},${k},0,0,1,${k}`);
    const file = await csvCase(dir, "nomarker.csv", rows.join("\n") + "\n");
    await expectFailure(
      importedFilaments3dEngine,
      { source: { file }, coreRadius: 0.01 },
      controls(0.5, 0.5),
      [
        `${file}:1 header: no column 'marker' (columns.marker)`,
        "set columns.marker: null if the files have none",
      ],
    );
    const params = {
      source: { file },
      coreRadius: 0.01,
      columns: { marker: null },
      markersWithoutColumn: "all",
      timing: { allowEarlyEnd: true },
    };
    const r = await runEngine(importedFilaments3dEngine, params, controls(0.5, 0.5));
    assertEquals([...r.frames[0].marker!], [1, 1, 1]);
  });
});
