import { assert, assertEquals } from "../test/_assert.ts";
import { normalizeText } from "../test/_study.ts";
import { describeFirstRealisation } from "./describe.ts";

// `spindrift check` output is spindrift's own design (DEVELOPERS.md); common practice, no source.

const external = (program: string) =>
  `name: d\nengine: external-program-2d\nparameters:\n  command: { program: ${program}, args: [--seed, "{seed}"] }\n` +
  `  output: { file: t.csv }\n  timeoutSeconds: 5\nseed: 1\nrun: { duration: 1, sampleInterval: 1 }\n`;

Deno.test("describeFirstRealisation gives the engine's lines for realisation 0, or none", async () => {
  const first = await describeFirstRealisation(normalizeText(external("sh"), "/tmp/d.yaml"));
  assert("lines" in first && first.lines.some((l) => /\/sh --seed \d+$/.test(l)), JSON.stringify(first));
  const plain = normalizeText(
    "name: p\nengine: point-vortex-2d\nparameters:\n  initial: { kind: random-cloud, count: 4, polarity: 0, " +
      "shape: uniform-disk, radius: 1 }\nseed: 1\nrun: { duration: 1, sampleInterval: 1 }\n",
  );
  assertEquals(await describeFirstRealisation(plain), { lines: [] });
});

Deno.test("describeFirstRealisation reports a realisation that could not start", async () => {
  const first = await describeFirstRealisation(normalizeText(external("no-such-program-xyz"), "/tmp/d.yaml"));
  assert(
    "problem" in first && first.problem.includes("'no-such-program-xyz' is not on PATH"),
    JSON.stringify(first),
  );
});
