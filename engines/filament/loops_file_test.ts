import assert from "node:assert/strict";
import { LoopsFileError, parseLoopsText, readLoopsFile } from "./loops_file.ts";

Deno.test("parseLoopsText reads JSON objects, bare arrays and CSV with a header", () => {
  const tri = [[0, 0, 0], [1, 0, 0], [0, 1, 0]];
  assert.deepEqual(parseLoopsText("a.json", JSON.stringify({ loops: [tri] })), [tri]);
  assert.deepEqual(parseLoopsText("a.JSON", JSON.stringify([tri, tri])), [tri, tri]);
  const csv = "loop,x,y,z\nA,0,0,0\nA,1,0,0\nA,0,1,0\nB,5,5,5\nB,6,5,5\nB,5,6,5\n";
  const loops = parseLoopsText("a.csv", csv);
  assert.equal(loops.length, 2);
  assert.deepEqual(loops[1][2], [5, 6, 5]);
});

Deno.test("parseLoopsText reports bad files with the place of the problem", () => {
  assert.throws(() => parseLoopsText("a.json", "{"), /a.json: invalid JSON/);
  assert.throws(
    () => parseLoopsText("a.json", '{"loops": [[[0,0,0],[1,0,0]]]}'),
    /loop 0 must be an array of at least 3/,
  );
  assert.throws(() => parseLoopsText("a.json", '[[[0,0,0],[1,0,"x"],[0,1,0]]]'), /loop 0, point 1/);
  assert.throws(() => parseLoopsText("a.csv", "A,0,0,0\nA,1,0\n"), /a.csv:2: expected 4 columns/);
  assert.throws(() => parseLoopsText("a.csv", "A,0,0,0\nA,1,0,y\n"), /a.csv:2: x, y, z must be finite/);
  assert.throws(() => parseLoopsText("a.txt", ""), LoopsFileError);
});

Deno.test("readLoopsFile reads a file and reports a missing one", async () => {
  const dir = await Deno.makeTempDir();
  const path = `${dir}/loops.json`;
  await Deno.writeTextFile(path, JSON.stringify({ loops: [[[0, 0, 0], [1, 0, 0], [0, 1, 0]]] }));
  assert.equal((await readLoopsFile(path)).length, 1);
  await assert.rejects(() => readLoopsFile(`${dir}/missing.json`), /cannot read loops file/);
  await Deno.remove(dir, { recursive: true });
});
