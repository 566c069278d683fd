import { assert, assertEquals } from "../../test/_assert.ts";
import { EngineFailure, type EngineRunInput } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { prepareInvocation } from "./invocation.ts";
import { type External2dParams, external2dParamsSchema } from "./params.ts";
import { programSeed } from "./program_seed.ts";

// The invocation format is spindrift's own (invocation.ts); common practice, no source.

const controls = { duration: 2, sampleInterval: 0.5, tolerance: 1e-9, maxDistance: 1e6 };
const STATE: [number, number, number, number] = [11, 22, 33, 44];

function studyFolder(): string {
  const dir = Deno.makeTempDirSync({ prefix: "spindrift-inv-" });
  Deno.writeTextFileSync(`${dir}/sim`, "#!/bin/sh\n");
  Deno.chmodSync(`${dir}/sim`, 0o755);
  Deno.writeTextFileSync(`${dir}/config.tpl`, "seed = {seed}\nD = {param.D}\nout = '{output}'\n");
  return dir;
}

function input(
  dir: string,
  raw: Record<string, unknown>,
  index = 3,
  state = STATE,
): EngineRunInput<External2dParams> {
  return {
    params: external2dParamsSchema.parse(raw),
    controls,
    rng: RandomStream.fromState(state),
    realisationIndex: index,
    baseDirectory: dir,
  };
}

const base = {
  command: {
    program: "./sim",
    args: ["--seed", "{seed}", "--D", "{param.D}", "--n", 7, "--out", "{output}", "{x}"],
  },
  inputFiles: [
    { file: "cfg-{index}.txt", template: "config.tpl" },
    { file: "inline.json", text: '{"n": {param.n}, "dir": "{workdir}", "study": "{studydir}"}' },
  ],
  environment: { SIM_N: "{param.n}", SIM_FLAG: true },
  parameters: { D: 0.25, n: 20 },
  output: { file: "out/r{index:2}.csv" },
  timeoutSeconds: 10,
};

Deno.test("prepareInvocation builds the exact argument vector, environment and input files", async () => {
  const dir = studyFolder();
  try {
    const inv = await prepareInvocation("external-program-2d", input(dir, base));
    const seed = programSeed(RandomStream.fromState(STATE));
    const wf = inv.workFolder;
    assert(wf.startsWith(`${dir}/spindrift-work/r3-`) && /r3-[0-9a-f]{12}$/.test(wf), wf);
    assertEquals(inv.outputFile, `${wf}/out/r03.csv`);
    assertEquals(inv.argv, [
      `${dir}/sim`,
      "--seed",
      seed.text,
      "--D",
      "0.25",
      "--n",
      "7",
      "--out",
      `${wf}/out/r03.csv`,
      "{x}",
    ]);
    assertEquals(inv.environment, {
      SPINDRIFT_SEED: seed.text,
      SPINDRIFT_SEED32: seed.text32,
      SPINDRIFT_INDEX: "3",
      SPINDRIFT_WORKDIR: wf,
      SPINDRIFT_OUTPUT: `${wf}/out/r03.csv`,
      SIM_N: "20",
      SIM_FLAG: "true",
    });
    assertEquals(inv.inputFiles, [
      {
        name: "cfg-3.txt",
        content: `seed = ${seed.text}\nD = 0.25\nout = '${wf}/out/r03.csv'\n`,
        source: "config.tpl",
      },
      { name: "inline.json", content: `{"n": 20, "dir": "${wf}", "study": "${dir}"}`, source: "inline text" },
    ]);
    assertEquals(inv.shell, false);
    assertEquals(inv.index, 3);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("prepareInvocation names the work folder after the realisation: stable, and distinct per realisation", async () => {
  const dir = studyFolder();
  try {
    const folder = async (raw: Record<string, unknown>, index = 3, state = STATE) =>
      (await prepareInvocation("external-program-2d", input(dir, raw, index, state))).workFolder;
    const a = await folder(base);
    assertEquals(await folder(base), a);
    const others = [
      await folder(base, 4),
      await folder(base, 3, [11, 22, 33, 45]),
      await folder({ ...base, parameters: { D: 0.5, n: 20 } }),
      await folder({ ...base, workDirectory: "elsewhere" }),
    ];
    for (const o of others) assert(o !== a, `${o} repeats ${a}`);
    assert(others[3].startsWith(`${dir}/elsewhere/r3-`), others[3]);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("prepareInvocation in shell mode quotes every value, so parameters cannot inject commands", async () => {
  const dir = studyFolder();
  try {
    const raw = {
      ...base,
      command: { program: "printf '%s|' {param.name} \"$1\"", shell: true, args: ["{param.name}"] },
      parameters: { D: 1, n: 1, name: "x'; echo injected; '" },
    };
    const inv = await prepareInvocation("external-program-2d", input(dir, raw));
    assertEquals(inv.argv.slice(0, 2), ["/bin/sh", "-c"]);
    assertEquals(inv.argv.slice(3), ["sh", "x'; echo injected; '"]);
    // Reference: the system's /bin/sh runs the command line (POSIX.1-2017 XCU §2.2.2 quoting).
    const out = await new Deno.Command(inv.argv[0], { args: inv.argv.slice(1), stdout: "piped" }).output();
    assertEquals(new TextDecoder().decode(out.stdout), "x'; echo injected; '|x'; echo injected; '|");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

async function failure(p: Promise<unknown>): Promise<EngineFailure> {
  try {
    await p;
  } catch (e) {
    if (e instanceof EngineFailure) return e;
    throw e;
  }
  throw new Error("expected an EngineFailure");
}

Deno.test("prepareInvocation fails clearly for a missing template, a missing program and an escaping file name", async () => {
  const dir = studyFolder();
  try {
    const noTemplate = await failure(
      prepareInvocation(
        "external-program-2d",
        input(dir, { ...base, inputFiles: [{ file: "a", template: "nope.tpl" }] }),
      ),
    );
    assertEquals(noTemplate.kind, "invalid-state");
    assert(noTemplate.message.includes("cannot read the input template 'nope.tpl'"), noTemplate.message);
    const noProgram = await failure(
      prepareInvocation("external-program-2d", input(dir, { ...base, command: { program: "./missing" } })),
    );
    assertEquals(noProgram.kind, "program-failed");
    assert(noProgram.message.includes("no such file"), noProgram.message);
    const escaping = await failure(
      prepareInvocation(
        "external-program-2d",
        input(dir, {
          ...base,
          output: { file: "{param.name}.csv" },
          parameters: { D: 1, n: 1, name: "../x" },
        }),
      ),
    );
    assertEquals(escaping.kind, "invalid-state");
    assert(escaping.message.includes("output.file: '../x.csv'"), escaping.message);
    Deno.writeTextFileSync(`${dir}/bad.tpl`, "{param.missing}");
    const bad = await failure(
      prepareInvocation(
        "external-program-2d",
        input(dir, { ...base, inputFiles: [{ file: "a", template: "bad.tpl" }] }),
      ),
    );
    assert(bad.message.includes("input template bad.tpl: {param.missing}"), bad.message);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
