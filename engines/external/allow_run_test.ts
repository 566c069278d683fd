import { assert, assertEquals } from "../../test/_assert.ts";
import { allowRunFlag, studyPrograms } from "./allow_run.ts";
import { resolveProgram } from "./program_path.ts";

// The permission step is spindrift's own design (allow_run.ts); Deno's flag syntax: --allow-run=<list>, a
// comma-separated list (Deno manual, "Security and permissions"). Common practice, no source.

function study(engine: string, command: string, sweep = ""): string {
  return `name: s\nengine: ${engine}\nparameters:\n  command: ${command}\n  output: { file: t.csv }\n` +
    `  timeoutSeconds: 5\n${sweep}seed: 1\nrun: { duration: 1, sampleInterval: 1 }\n`;
}

function folderWithProgram(): string {
  const dir = Deno.makeTempDirSync({ prefix: "spindrift-allow-" });
  Deno.mkdirSync(`${dir}/bin`);
  Deno.writeTextFileSync(`${dir}/bin/sim`, "#!/bin/sh\n");
  Deno.chmodSync(`${dir}/bin/sim`, 0o755);
  Deno.writeTextFileSync(`${dir}/bin/sim2`, "#!/bin/sh\n");
  Deno.chmodSync(`${dir}/bin/sim2`, 0o755);
  return dir;
}

Deno.test("studyPrograms names the study's program as the engine will start it", () => {
  const dir = folderWithProgram();
  try {
    const sh = resolveProgram("sh", dir);
    assert("path" in sh);
    assertEquals(studyPrograms(study("external-program-2d", "{ program: sh }"), `${dir}/s.yaml`), {
      programs: [sh.path],
      problems: [],
    });
    assertEquals(
      studyPrograms(study("external-program-3d", "{ program: ./bin/sim }"), `${dir}/s.yaml`)?.programs,
      [`${dir}/bin/sim`],
    );
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("studyPrograms grants /bin/sh for shell: true and every swept program", () => {
  const dir = folderWithProgram();
  try {
    const shell = study("external-program-2d", "{ program: 'cd x && ./sim {seed}', shell: true }");
    assertEquals(studyPrograms(shell, `${dir}/s.yaml`)?.programs, ["/bin/sh"]);
    const swept = study(
      "external-program-2d",
      "{ program: ./bin/sim }",
      "sweep:\n  grid:\n    command.program: [./bin/sim, ./bin/sim2]\n",
    );
    assertEquals(studyPrograms(swept, `${dir}/s.yaml`)?.programs, [`${dir}/bin/sim`, `${dir}/bin/sim2`]);
    const mixed = study(
      "external-program-2d",
      "{ program: ./bin/sim }",
      "sweep:\n  zip:\n    - command: [{ program: ./bin/sim2 }, { program: 'echo hi', shell: true }]\n",
    );
    assertEquals(studyPrograms(mixed, `${dir}/s.yaml`)?.programs, [
      "/bin/sh",
      `${dir}/bin/sim`,
      `${dir}/bin/sim2`,
    ]);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("studyPrograms ignores other engines and unreadable text, and reports programs it cannot find", () => {
  assertEquals(studyPrograms(study("point-vortex-2d", "{ program: sh }"), "/tmp/s.yaml"), null);
  assertEquals(studyPrograms("name: [unclosed", "/tmp/s.yaml"), null);
  assertEquals(studyPrograms("- a list", "/tmp/s.yaml"), null);
  const missing = studyPrograms(
    study("external-program-2d", "{ program: no-such-program-xyz }"),
    "/tmp/s.yaml",
  );
  assertEquals(missing?.programs, []);
  assert(missing!.problems[0].includes("'no-such-program-xyz' is not on PATH"), missing!.problems[0]);
});

Deno.test("allowRunFlag finds study files among any command's arguments", async () => {
  const dir = folderWithProgram();
  try {
    Deno.writeTextFileSync(`${dir}/ext.yaml`, study("external-program-2d", "{ program: ./bin/sim }"));
    Deno.writeTextFileSync(`${dir}/other.yml`, study("point-vortex-2d", "{ program: ./bin/sim2 }"));
    Deno.writeTextFileSync(`${dir}/notes.txt`, study("external-program-2d", "{ program: ./bin/sim2 }"));
    const flag = await allowRunFlag(["run", `${dir}/ext.yaml`, "--db", `${dir}/x.sqlite`, "-w", "2"]);
    assertEquals(flag, `--allow-run=${dir}/bin/sim`);
    assertEquals(await allowRunFlag(["run", `${dir}/other.yml`, `${dir}/notes.txt`, `${dir}/none.yaml`]), "");
    const warnings: string[] = [];
    Deno.writeTextFileSync(`${dir}/lost.yaml`, study("external-program-2d", "{ program: ./bin/none }"));
    assertEquals(await allowRunFlag(["run", `${dir}/lost.yaml`], (m) => warnings.push(m)), "");
    assert(
      warnings[0].includes("bin/none") && warnings[0].includes("its realisations will fail"),
      warnings[0],
    );
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("allowRunFlag refuses a program path with a comma (the flag's list separator)", async () => {
  const dir = folderWithProgram();
  try {
    Deno.writeTextFileSync(`${dir}/bin/a,b`, "#!/bin/sh\n");
    Deno.chmodSync(`${dir}/bin/a,b`, 0o755);
    Deno.writeTextFileSync(`${dir}/ext.yaml`, study("external-program-2d", "{ program: './bin/a,b' }"));
    let message = "";
    try {
      await allowRunFlag(["run", `${dir}/ext.yaml`]);
    } catch (e) {
      message = (e as Error).message;
    }
    assert(message.includes("contains a comma"), message);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("allowRunFlag follows a cluster manifest to its frozen study copy and the original study folder", async () => {
  const dir = folderWithProgram();
  try {
    // Layout of a cluster results folder (study/executors/submission.ts): <results>/study-<hash>.yaml and
    // <results>/<submission>/manifest.json naming it; the program path is relative to the original study file.
    Deno.mkdirSync(`${dir}/results/20261201T101500Z`, { recursive: true });
    Deno.writeTextFileSync(
      `${dir}/results/study-0123456789abcdef.yaml`,
      study("external-program-2d", "{ program: ./bin/sim }"),
    );
    const manifest = { format: 1, studyFile: "study-0123456789abcdef.yaml", sourcePath: `${dir}/s.yaml` };
    Deno.writeTextFileSync(`${dir}/results/20261201T101500Z/manifest.json`, JSON.stringify(manifest));
    const args = [
      "run-slice",
      `${dir}/results/20261201T101500Z/manifest.json`,
      "--slice",
      "0",
      "--shard",
      "x.sqlite",
    ];
    assertEquals(await allowRunFlag(args), `--allow-run=${dir}/bin/sim`);
    Deno.writeTextFileSync(`${dir}/other.json`, '{"not": "a manifest"}');
    assertEquals(await allowRunFlag(["run-slice", `${dir}/other.json`]), "");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
