import { assert, assertEquals } from "../../test/_assert.ts";
import { type EngineEvent, EngineFailure, type EngineRunInput, type Frame } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { externalProgram2dEngine, externalProgram3dEngine } from "./engine.ts";
import type { ExternalParams } from "./params.ts";

// The programs are /bin/sh command lines (POSIX.1-2017 XCU sh); what the engine records and how it fails is
// spindrift's own design (engine.ts); common practice, no source.

const controls = { duration: 1, sampleInterval: 0.5, tolerance: 1e-9, maxDistance: 1e6 };

/** A 2D track file: two vortices at t = 0, 0.5, 1, moving along x. */
const TRACKS = "t,id,x,y,circulation\\n" +
  "0,1,0.5,0,1\\n0,2,-0.5,0,-1\\n0.5,1,0.6,0,1\\n0.5,2,-0.6,0,-1\\n1,1,0.7,0,1\\n1,2,-0.7,0,-1\\n";

interface Collected {
  frames: { t: number; n: number; x: number[]; z: number[] | null; loop: number[] | null }[];
  events: EngineEvent[];
}

function sink(c: Collected) {
  return {
    frame(f: Frame) {
      c.frames.push({
        t: f.t,
        n: f.n,
        x: Array.from(f.x.subarray(0, f.n)),
        z: f.z === null ? null : Array.from(f.z.subarray(0, f.n)),
        loop: f.loop === null ? null : Array.from(f.loop.subarray(0, f.n)),
      });
    },
    event(e: EngineEvent) {
      c.events.push(e);
    },
  };
}

function studyFolder(): string {
  return Deno.makeTempDirSync({ prefix: "spindrift-ext-" });
}

function params2d(dir: string, script: string, extra: Record<string, unknown> = {}) {
  return externalProgram2dEngine.paramsSchema.parse({
    command: { program: "/bin/sh", args: ["-c", script, "sh", "{output}"] },
    output: { file: "tracks.csv" },
    timeoutSeconds: 10,
    killGraceSeconds: 0.5,
    workDirectory: `${dir}/work`,
    ...extra,
  });
}

function runInput<P extends ExternalParams>(dir: string, params: P): EngineRunInput<P> {
  return {
    params,
    controls,
    rng: RandomStream.fromState([1, 2, 3, 4]),
    realisationIndex: 0,
    baseDirectory: dir,
  };
}

async function runFailing(
  dir: string,
  script: string,
  extra: Record<string, unknown> = {},
): Promise<{ failure: EngineFailure; c: Collected; workFolders: string[] }> {
  const c: Collected = { frames: [], events: [] };
  try {
    await externalProgram2dEngine.run(runInput(dir, params2d(dir, script, extra)), sink(c));
  } catch (e) {
    if (!(e instanceof EngineFailure)) throw e;
    let workFolders: string[] = [];
    try {
      workFolders = [...Deno.readDirSync(`${dir}/work`)].map((d) => d.name);
    } catch {
      // no work directory left
    }
    return { failure: e, c, workFolders };
  }
  throw new Error("expected the realisation to fail");
}

Deno.test("external-program-2d runs the program, imports its output and records the run", async () => {
  const dir = studyFolder();
  try {
    const c: Collected = { frames: [], events: [] };
    const summary = await externalProgram2dEngine.run(
      runInput(dir, params2d(dir, `printf '${TRACKS}' > "$1"; echo done`)),
      sink(c),
    );
    assertEquals(c.frames.map((f) => [f.t, f.n]), [[0, 2], [0.5, 2], [1, 2]]);
    assertEquals(c.frames[2].x, [0.7, -0.7]);
    assertEquals(summary.scalars["import.rows"], 6);
    const run = c.events[0];
    assertEquals(run.kind, "program-run");
    assertEquals(run.t, 0);
    assertEquals(run.data.exit_code, 0);
    assertEquals(run.data.timed_out, 0);
    assertEquals(run.data.stdout_bytes, 5);
    const detail = run.detail!;
    const argv = detail.argv as string[];
    assertEquals(argv.slice(0, 2), ["/bin/sh", "-c"]);
    assertEquals(argv[4], `${detail.work_folder}/tracks.csv`);
    assertEquals(detail.stdout_tail, "done\n");
    assertEquals((detail.environment as Record<string, string>).SPINDRIFT_SEED, detail.seed);
    assertEquals(
      BigInt(detail.seed as string),
      (BigInt(run.data.seed_high) << 32n) | BigInt(run.data.seed_low),
    );
    // A successful realisation's work folder is removed (keepWorkFolders: failed).
    assertEquals([...Deno.readDirSync(`${dir}/work`)], []);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("external-program-2d fails a nonzero exit with the exit code, last output, command and kept folder", async () => {
  const dir = studyFolder();
  try {
    const { failure, c, workFolders } = await runFailing(
      dir,
      "echo working; echo 'boom: bad input' >&2; exit 3",
    );
    assertEquals(failure.kind, "program-failed");
    const m = failure.message;
    assert(m.startsWith("the program exited with code 3; "), m);
    assert(m.includes("last output (stderr): boom: bad input"), m);
    assert(m.includes("command: /bin/sh -c "), m);
    assert(m.includes(`work folder: ${dir}/work/r0-`) && m.includes("(kept)"), m);
    assertEquals(workFolders.length, 1);
    assertEquals(c.events.length, 1);
    assertEquals(c.events[0].data.exit_code, 3);
    assertEquals(c.events[0].detail!.stderr_tail, "boom: bad input\n");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("external-program-2d fails with 'timeout' and stops a program past its time limit", async () => {
  const dir = studyFolder();
  try {
    const t0 = performance.now();
    const { failure, c } = await runFailing(dir, "exec sleep 30", { timeoutSeconds: 0.3 });
    assertEquals(failure.kind, "timeout");
    assert(
      failure.message.includes("ran past timeoutSeconds = 0.3 s and was stopped (SIGTERM)"),
      failure.message,
    );
    assert(performance.now() - t0 < 5000);
    assertEquals(c.events[0].data.timed_out, 1);
    assertEquals(c.events[0].data.signal, 15);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("external-program-2d fails a program that exits 0 without writing its output, listing the folder", async () => {
  const dir = studyFolder();
  try {
    const { failure } = await runFailing(dir, "echo nothing > other.txt");
    assertEquals(failure.kind, "program-failed");
    assert(failure.message.includes("exited with code 0"), failure.message);
    assert(failure.message.includes("wrote no output file 'tracks.csv'"), failure.message);
    assert(failure.message.includes("the folder holds other.txt, spindrift-stderr.txt"), failure.message);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("external-program-2d fails malformed output with the reader's file, line and column", async () => {
  const dir = studyFolder();
  try {
    const bad = TRACKS.replace("0.6,0,1", "0.6x,0,1");
    const { failure } = await runFailing(dir, `printf '${bad}' > "$1"`);
    assertEquals(failure.kind, "invalid-state");
    assert(failure.message.startsWith("in the program's output: "), failure.message);
    assert(
      failure.message.includes("tracks.csv:4 column 'x': got '0.6x', expected a number"),
      failure.message,
    );
    assert(failure.message.includes("(kept)"), failure.message);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("external-program-2d tells a crash (program-failed) from a stop from outside (killed)", async () => {
  const dir = studyFolder();
  try {
    const crash = await runFailing(dir, "kill -SEGV $$");
    assertEquals(crash.failure.kind, "program-failed");
    assert(crash.failure.message.includes("ended by signal SIGSEGV (11)"), crash.failure.message);
    const stopped = await runFailing(dir, "kill -INT $$");
    assertEquals(stopped.failure.kind, "killed");
    assert(stopped.failure.message.includes("ended by signal SIGINT (2)"), stopped.failure.message);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("external-program-2d keeps work folders as keepWorkFolders says", async () => {
  const dir = studyFolder();
  try {
    await externalProgram2dEngine.run(
      runInput(dir, params2d(dir, `printf '${TRACKS}' > "$1"`, { keepWorkFolders: "always" })),
      sink({ frames: [], events: [] }),
    );
    const kept = [...Deno.readDirSync(`${dir}/work`)];
    assertEquals(kept.length, 1);
    const files = [...Deno.readDirSync(`${dir}/work/${kept[0].name}`)].map((e) => e.name).sort();
    assertEquals(files, ["spindrift-stderr.txt", "spindrift-stdout.txt", "tracks.csv"]);
    Deno.removeSync(`${dir}/work`, { recursive: true });
    const { workFolders } = await runFailing(dir, "exit 1", { keepWorkFolders: "never" });
    assertEquals(workFolders, []);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("describeRealisation shows the command line that run then starts", async () => {
  const dir = studyFolder();
  try {
    const params = params2d(dir, `printf '${TRACKS}' > "$1"`, {
      environment: { MODE: "fast run" },
      inputFiles: [{ file: "cfg.txt", text: "a\nb\n" }],
    });
    const lines = await externalProgram2dEngine.describeRealisation!(runInput(dir, params));
    const c: Collected = { frames: [], events: [] };
    await externalProgram2dEngine.run(runInput(dir, params), sink(c));
    assertEquals(lines[1], `  ${c.events[0].detail!.command}`);
    assert(lines[0].startsWith(`realisation 0 would run in ${c.events[0].detail!.work_folder}`), lines[0]);
    assert(lines.some((l) => l.includes("MODE='fast run'")), lines.join("\n"));
    assert(lines.some((l) => l === "  input file cfg.txt (from inline text, 2 lines)"), lines.join("\n"));
    assert(lines.some((l) => l.includes("time limit 10 s")), lines.join("\n"));
    // Describing runs nothing and writes nothing.
    assertEquals([...Deno.readDirSync(`${dir}/work`)], []);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("external-program-3d imports filament snapshots and gives the core radius to the observables", async () => {
  const dir = studyFolder();
  try {
    const rows = ["t,loop,x,y,z,marker"];
    for (const t of [0, 0.5, 1]) {
      for (let i = 0; i < 3; i++) rows.push(`${t},7,${Math.cos(2 * i)},${Math.sin(2 * i)},${t},1`);
    }
    const params = externalProgram3dEngine.paramsSchema.parse({
      command: {
        program: "/bin/sh",
        args: ["-c", `printf '${rows.join("\\n")}\\n' > "$1"`, "sh", "{output}"],
      },
      output: { file: "loops.csv" },
      columns: { id: null, order: null },
      timeoutSeconds: 10,
      workDirectory: `${dir}/work`,
      coreRadius: { value: 1, unit: "nm" },
      units: { length: "um" },
    });
    const c: Collected = { frames: [], events: [] };
    await externalProgram3dEngine.run(runInput(dir, params), sink(c));
    assertEquals(c.frames.length, 3);
    assertEquals(c.frames[1].z, [0.5, 0.5, 0.5]);
    assertEquals(c.frames[1].loop, [7, 7, 7]);
    // 1 nm in a study length unit of 1 µm is 1e-3 (SI prefixes, BIPM SI Brochure 9th ed. Table 7).
    assertEquals(externalProgram3dEngine.scales!(params).coreRadius, 1e-3);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
