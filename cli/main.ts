/**
 * The spindrift command line. Thin: parse arguments, call the library, map errors to exit codes.
 * Exit codes: 0 ok, 1 the work failed (bad study, failed realisations, missing database), 2 wrong usage,
 * 130 interrupted, 70 internal error.
 */
import { Argument, Command, CommanderError, Option } from "@commander-js/extra-typings";
import { dirname, join, resolve } from "node:path";
import { loadStudy } from "../study/load.ts";
import { formatProblems } from "../study/problems.ts";
import { type NormalizedStudy, normalizeStudy } from "../study/normalize.ts";
import { type RunReport, runStudy } from "../study/runner.ts";
import { describeFirstRealisation } from "../study/describe.ts";
import { createProgress } from "../study/progress.ts";
import { StoreError } from "../store/db.ts";
import { StoreReadError } from "../store/reads.ts";
import { writeReport } from "../reports/mod.ts";
import { provenance, TOOL_VERSION } from "./provenance.ts";
import { UserError } from "./errors.ts";
import { openReadOnly, type QueryFormat, runQuery } from "./query.ts";
import { describeTarget, type ExportFormat, exportProvenance, exportRealisation } from "./export.ts";
import { analyseAndReport, analyseCommand, replicateCount } from "./analyse.ts";
import { compareCommand } from "./compare.ts";
import * as cluster from "../study/executors/mod.ts";
import { starterEngines } from "../study/starter.ts";
import { newStudyCommand } from "./new.ts";
import { checkReport } from "./check.ts";
import { statusCommand } from "./status.ts";
import { describeUnits } from "../study/units.ts";

const REPO = new URL("../", import.meta.url);
/** The bundled demo studies; `decay` is a homogeneous-decay study run first to calibrate χ₂ (Vinen fit). */
const DEMOS: Readonly<Record<string, { readonly study: URL; readonly decay?: URL }>> = {
  "film-patch": {
    study: new URL("examples/film-patch.yaml", REPO),
    decay: new URL("examples/film-decay.yaml", REPO),
  },
  "ring-burst": { study: new URL("examples/ring-burst.yaml", REPO) },
};
/** Realisations per point below which the MSD fit warns that its intervals are unreliable (msd_fit.ts). */
const ANALYSIS_MIN_REALISATIONS = 20;
/** The launcher cluster array tasks call (absolute path). */
const LAUNCHER = new URL("spindrift", REPO).pathname;

/** Output, provenance and Slurm access for the cluster commands. */
function clusterEnv(): cluster.CommandEnv {
  return {
    write: out,
    note: (l) => console.error(l),
    provenance: provenance(),
    batch: cluster.slurmCommands(),
  };
}

function out(line = ""): void {
  console.log(line);
}

function positiveInt(name: string) {
  return (v: string): number => {
    const n = Number(v);
    if (!Number.isInteger(n) || n < 1) throw new UserError(`${name} must be a whole number ≥ 1, got '${v}'`);
    return n;
  };
}

function nonNegativeInt(name: string) {
  return (v: string): number => {
    const n = Number(v);
    if (v.trim() === "" || !Number.isInteger(n) || n < 0) {
      throw new UserError(`${name} must be a whole number ≥ 0, got '${v}'`);
    }
    return n;
  };
}

/** Writes to the file `path` (created at the first write, so a refused export leaves no file) or stdout. */
function lazyOutput(path: string | undefined): { write(chunk: Uint8Array): Promise<void>; close(): void } {
  let file: Deno.FsFile | null = null;
  return {
    async write(chunk: Uint8Array) {
      if (path !== undefined && file === null) {
        file = await Deno.open(path, { write: true, create: true, truncate: true });
      }
      const target = file ?? Deno.stdout;
      let off = 0;
      while (off < chunk.length) off += await target.write(chunk.subarray(off));
    },
    close() {
      file?.close();
    },
  };
}

function collectValues(value: string, previous: string[] | undefined): string[] {
  return [...(previous ?? []), value];
}

function defaultWorkers(): number {
  return navigator.hardwareConcurrency || 1;
}

/** Loads, validates and normalizes a study file, or throws a UserError listing every problem. */
async function loadNormalized(path: string): Promise<NormalizedStudy> {
  const loaded = await loadStudy(path);
  for (const w of loaded.warnings ?? []) console.error(`warning: ${formatProblems([w])}`);
  if (!loaded.ok) {
    const n = loaded.problems.length;
    throw new UserError(
      `${path}: ${n} problem${n === 1 ? "" : "s"}\n${formatProblems(loaded.problems)}`,
      loaded.problems.every((p) => p.code === "file-unreadable")
        ? "check the path (relative paths start from the current folder)"
        : "fix the lines above and run: spindrift check " + path,
    );
  }
  return normalizeStudy(loaded.study, { text: loaded.text, sourcePath: resolve(path) });
}

function defaultDbPath(studyPath: string, study: NormalizedStudy): string {
  return join(dirname(studyPath), `${study.name}.sqlite`);
}

function defaultReportPath(dbPath: string): string {
  return dbPath.replace(/\.(sqlite3?|db)$/i, "") + ".html";
}

function printRunReport(r: RunReport, dbPath: string): void {
  const parts = [`${r.completed} computed`, `${r.skipped} already stored`];
  if (r.failed) parts.push(`${r.failed} failed`);
  out(
    `${r.interrupted ? "interrupted" : "finished"}: ${parts.join(", ")} of ${r.planned} realisations ` +
      `in ${r.wallSeconds.toFixed(1)} s`,
  );
  if (r.discardedUnfinished) {
    out(`  (${r.discardedUnfinished} unfinished realisation(s) from an earlier run were rerun)`);
  }
  for (const f of r.failures.slice(0, 10)) {
    out(`  failed: ${f.pointLabel} #${f.index}: [${f.kind}] ${f.error}`);
  }
  if (r.failures.length > 10) out(`  … and ${r.failures.length - 10} more (see the report)`);
  out(`database: ${dbPath}`);
  if (r.interrupted) out("run the same command again to resume; finished realisations are kept");
}

/** Runs a study with Ctrl-C/SIGTERM handling; returns the run report. */
async function runWithSignals(
  study: NormalizedStudy,
  dbPath: string,
  opts: { workers: number; fresh: boolean; keepFailed: boolean; quiet: boolean },
): Promise<RunReport> {
  const controller = new AbortController();
  const onSignal = () => {
    console.error("\nstopping: finished realisations are kept; rerun the same command to resume");
    controller.abort();
  };
  const signals: Deno.Signal[] = ["SIGINT", "SIGTERM"];
  for (const s of signals) Deno.addSignalListener(s, onSignal);
  try {
    return await runStudy(study, {
      dbPath,
      workers: opts.workers,
      fresh: opts.fresh,
      keepFailed: opts.keepFailed,
      progress: createProgress({ quiet: opts.quiet }),
      provenance: provenance(),
      signal: controller.signal,
    });
  } finally {
    for (const s of signals) Deno.removeSignalListener(s, onSignal);
  }
}

export function buildProgram(): Command {
  const program = new Command()
    .name("spindrift")
    .description(
      "Parameter studies of spreading quantized-vortex clouds: define a study once (YAML), run every " +
        "realisation reproducibly on all cores (or a Slurm cluster), keep them in an SQLite database, estimate " +
        "diffusion coefficients with confidence intervals, and write report pages.",
    )
    .version(TOOL_VERSION, "-V, --version", "print the spindrift version")
    .helpOption("-h, --help", "show help for a command")
    .showSuggestionAfterError(true)
    .showHelpAfterError("(add --help for usage)")
    .configureHelp({ sortSubcommands: false })
    .exitOverride()
    .configureOutput({
      writeErr: (s) => Deno.stderr.writeSync(new TextEncoder().encode(s)),
      outputError: (s, write) => write(`spindrift: ${s.replace(/^error: /, "")}`),
    })
    .addHelpText(
      "after",
      `
Typical session:
  spindrift new point-vortex-2d my-study.yaml    write a commented starter study (list of engines: spindrift new)
  spindrift check my-study.yaml        validate the study file (every problem, with line numbers)
  spindrift run my-study.yaml          run or resume it (database next to the study file)
  spindrift run my-study.yaml --cluster    or submit it as a Slurm job array; then:
  spindrift collect my-study.yaml      fold the cluster's results into the database
  spindrift analyse my-study.sqlite    estimate D/κ, evaporation and losses with bootstrap intervals
  spindrift report my-study.sqlite     write the HTML report page
  spindrift query my-study.sqlite "SELECT status, COUNT(*) FROM realisations GROUP BY status"
  spindrift demo                       run the bundled demo study and write its report`,
    );

  program.command("new")
    .description(
      "write a commented starter study for an engine, ready for 'spindrift check' (list: spindrift new)",
    )
    .argument("[engine]", "engine id, e.g. point-vortex-2d (leave out to list the engines)")
    .argument("[file]", "study file to write (default: my-study.yaml; - writes to standard output)")
    .option("--name <name>", "study name (default: the file name without .yaml)")
    .option("--force", "overwrite the file if it exists", false)
    .action(async (engineId, file, o) => {
      if (engineId === undefined) {
        out("engines (spindrift new ENGINE [FILE] writes a starter study for one):");
        const w = Math.max(...starterEngines().map((e) => e.id.length));
        for (const e of starterEngines()) out(`  ${e.id.padEnd(w)}  ${e.title}`);
        return;
      }
      Deno.exitCode = await newStudyCommand(engineId, file ?? "my-study.yaml", o, out);
    });

  program.command("check")
    .description("validate a study file and show what it would run (nothing is computed)")
    .argument("<study>", "study file (YAML)")
    .option("--json", "print the result as one JSON object (shape: README, 'Machine-readable output')")
    .action(async (path, o) => {
      if (o.json) {
        const report = await checkReport(path);
        out(JSON.stringify(report, null, 2));
        if (!report.ok) Deno.exitCode = 1;
        return;
      }
      const study = await loadNormalized(path);
      const first = await describeFirstRealisation(study);
      if ("problem" in first) {
        throw new UserError(`${path}: the first realisation could not start: ${first.problem}`);
      }
      const n = study.points.length;
      out(`${path}: ok`);
      out(
        `  engine ${study.engine.id} ${study.engine.version}; ${n} parameter point${n === 1 ? "" : "s"} × ` +
          `${study.realisations} realisations = ${n * study.realisations} runs`,
      );
      for (const p of study.points.slice(0, 20)) out(`  point ${p.index}: ${p.label}`);
      if (n > 20) out(`  … ${n - 20} more points`);
      out(
        `  duration ${study.run.duration}, frame every ${study.run.sampleInterval}, tolerance ${study.run.tolerance}`,
      );
      out(`  observables: ${study.observables.record.join(", ")}`);
      for (const line of describeUnits(study).lines) out(`  ${line}`);
      for (const line of first.lines) out(`  ${line}`);
    });

  program.command("run")
    .description("run a study, or resume it: stored realisations are kept, missing and failed ones run")
    .argument("<study>", "study file (YAML)")
    .option("--db <path>", "database file (default: <study name>.sqlite next to the study file)")
    .addOption(
      new Option(
        "-w, --workers <n>",
        "parallel workers (default: the study's run.workers, else number of cores)",
      )
        .argParser(positiveInt("--workers")),
    )
    .option("--fresh", "delete this study's stored realisations and start over", false)
    .option("--keep-failed", "do not rerun realisations that failed before", false)
    .option("-q, --quiet", "no progress output", false)
    .option("--cluster", "submit a Slurm job array on the cluster instead of running on this machine")
    .addOption(new Option("--executor <where>", "deprecated: --executor slurm is --cluster").hideHelp())
    .optionsGroup("Cluster options (with --cluster; see README, 'Running on a cluster'):")
    .option(
      "--results <dir>",
      "folder for job files and shards (default: <database name>-cluster/ beside it)",
    )
    .option("--dry-run", "print the sbatch script; write and submit nothing")
    .option("--wait", "wait until the job array has finished, then collect")
    .addOption(
      new Option("--slice-size <n>", "realisations per array task (default 1; more if over 1000 to run)")
        .argParser(positiveInt("--slice-size")),
    )
    .option("--partition <name>", "Slurm partition (default: the cluster's default)")
    .option(
      "--time-limit <time>",
      'time limit per array task, e.g. "4:00:00", "1-12:00:00" (default 24:00:00)',
    )
    .option("--memory <size>", 'memory per array task, e.g. "8G" (default 2G)')
    .addOption(
      new Option("--cpus-per-task <n>", "CPUs per array task: realisations it runs at once (default 1)")
        .argParser(positiveInt("--cpus-per-task")),
    )
    .option("--account <name>", "Slurm account to charge")
    .addOption(
      new Option("--sbatch-line <option>", 'one more sbatch option, e.g. "--qos=long" (repeatable)')
        .argParser(collectValues),
    )
    .addOption(
      new Option("--max-concurrent <n>", "at most this many array tasks at once").argParser(
        positiveInt("--max-concurrent"),
      ),
    )
    .action(async (path, o) => {
      const study = await loadNormalized(path);
      const dbPath = o.db ?? defaultDbPath(path, study);
      if (!o.quiet) { for (const line of describeUnits(study).lines) out(line); }
      if (cluster.checkExecutorOptions(o, (l) => console.error(`spindrift: ${l}`)) === "slurm") {
        const flags = { ...o, dbPath, extraLines: o.sbatchLine, launcher: LAUNCHER };
        Deno.exitCode = await cluster.clusterRunCommand(study, flags, clusterEnv());
        return;
      }
      const report = await runWithSignals(study, dbPath, {
        workers: o.workers ?? study.run.workers ?? defaultWorkers(),
        fresh: o.fresh,
        keepFailed: o.keepFailed,
        quiet: o.quiet,
      });
      printRunReport(report, dbPath);
      if (report.interrupted) Deno.exitCode = 130;
      else if (report.failed) Deno.exitCode = 1;
      if (!report.interrupted) {
        out(`next: spindrift analyse ${dbPath}   (D/κ with intervals), then spindrift report ${dbPath}`);
      }
    });

  program.command("collect")
    .description("fold the shards of a cluster run into the study database (any time, as often as wanted)")
    .argument("<study>", "study file (YAML) submitted with 'spindrift run --cluster'")
    .option("--db <path>", "database file (default: <study name>.sqlite next to the study file)")
    .option("--results <dir>", "cluster results folder (default: <database name>-cluster/ beside it)")
    .action(async (path, o) => {
      const study = await loadNormalized(path);
      const flags = { dbPath: o.db ?? defaultDbPath(path, study), results: o.results };
      Deno.exitCode = await cluster.collectCommand(study, flags, clusterEnv());
    });

  program.command("run-slice", { hidden: true })
    .description("run one slice of a cluster submission into its shard (what each array task runs)")
    .argument("<manifest>", "manifest.json of the submission")
    .requiredOption("--slice <k>", "slice index (the array task index)")
    .requiredOption("--shard <file>", "shard database to write")
    .addOption(new Option("-w, --workers <n>", "realisations at once").argParser(positiveInt("--workers")))
    .action(async (manifest, o) => {
      Deno.exitCode = await cluster.runSliceCommand(manifest, o, { write: out, provenance: provenance() });
    });

  program.command("report")
    .description("write the study's report page (self-contained HTML, works offline) and SVG charts")
    .argument("<database>", "study database written by 'spindrift run'")
    .option("-o, --out <file>", "HTML file to write (default: next to the database)")
    .action(async (dbPath, o) => {
      openReadOnly(dbPath).close();
      const res = await writeReport(dbPath, { out: o.out ?? defaultReportPath(dbPath) });
      out(`report: ${res.html}`);
      out(`charts as SVG: ${res.svgDir}`);
    });

  program.command("analyse")
    .description(
      "estimate ν′ = D/κ (mean-square displacement, RMS radius, Vinen-equation fit) and the evaporation and " +
        "losses with bootstrap intervals from a study database, and store the results in it",
    )
    .argument("<database>", "study database written by 'spindrift run'")
    .addOption(
      new Option("-B, --replicates <n>", "bootstrap replicates of the MSD fit (default 2000)")
        .argParser(replicateCount("--replicates")),
    )
    .option("--seed <text>", "base of the bootstrap seeds (default: the study hash, so reruns agree)")
    .option("--chi2 <x>", "χ₂ of the Vinen equation, from a homogeneous decay study (enables the Vinen fit)")
    .option(
      "--chi2-from <database>",
      "estimate χ₂ from a homogeneous decay study (periodic box; 1/L linear in t) and use it with its interval",
    )
    .option("--chi2-range <low,high>", "χ₂ range for the sensitivity of the Vinen D (default χ₂/2,2χ₂)")
    .addOption(
      new Option("--vinen-replicates <n>", "bootstrap replicates of the Vinen fit (default 200)")
        .argParser(replicateCount("--vinen-replicates")),
    )
    .option("--no-sensitivity", "skip the classification-threshold sensitivity table")
    .option("--no-correlations", "skip the velocity correlations")
    .addOption(
      new Option("--study <id>", "study revision id (default: the latest)").argParser(positiveInt("--study")),
    )
    .option("-v, --verbose", "print progress", false)
    .action(async (dbPath, o) => {
      openReadOnly(dbPath).close();
      for (const line of await analyseCommand(dbPath, o)) out(line);
    });

  program.command("compare")
    .description("write one page with two or more studies side by side on shared axes")
    .argument("<databases...>", "two or more study databases")
    .option("-o, --out <file>", "HTML file to write", "compare.html")
    .action(async (dbPaths, o) => {
      for (const p of dbPaths) openReadOnly(p).close();
      for (const line of await compareCommand(dbPaths, o)) out(line);
    });

  program.command("query")
    .description("run one read-only SQL statement on a study database")
    .argument("<database>", "study database")
    .argument("<sql>", 'SQL statement, e.g. "SELECT * FROM realisations LIMIT 5"')
    .addOption(
      new Option("-f, --format <format>", "output format").choices(["table", "csv", "json"]).default("table"),
    )
    .action((dbPath, sql, o) => {
      out(runQuery(dbPath, sql, o.format as QueryFormat));
    });

  program.command("export")
    .description(
      "write one realisation's frames: one row per vortex (or filament point) per frame: time, id, position, label",
    )
    .argument("<database>", "study database")
    .option("-p, --point <point>", "parameter point: its index (0, 1, …) or label; not needed with one point")
    .addOption(
      new Option("-i, --index <n>", "realisation index within the point (0, 1, …)").argParser(
        nonNegativeInt("--index"),
      ),
    )
    .addOption(
      new Option("--id <n>", "or: the database row id (realisations.id)").argParser(positiveInt("--id")),
    )
    .addOption(
      new Option("--study <id>", "study revision id (default: the latest)").argParser(positiveInt("--study")),
    )
    .addOption(new Option("-f, --format <format>", "output format").choices(["csv", "jsonl"]).default("csv"))
    .option("-o, --out <file>", "file to write (default: standard output)")
    .option(
      "--provenance <file>",
      "also write where the export came from (study, point, index, seed) as JSON",
    )
    .addOption(new Option("-r, --realisation <id>", "deprecated: the database row id, now --id").hideHelp())
    .action(async (dbPath, o) => {
      let id = o.id;
      if (o.realisation !== undefined) {
        console.error(
          "spindrift: --realisation is deprecated and will be removed in the next release: it meant the database " +
            "row id; write --id, or select by --point and --index",
        );
        id ??= positiveInt("--realisation")(o.realisation);
      }
      const sel = { point: o.point, index: o.index, id, study: o.study };
      const output = lazyOutput(o.out);
      let res;
      try {
        res = await exportRealisation(dbPath, sel, o.format as ExportFormat, output);
      } finally {
        output.close();
      }
      const what = describeTarget(res.target);
      if (o.provenance) {
        const record = exportProvenance(dbPath, res, o.format as ExportFormat);
        await Deno.writeTextFile(o.provenance, JSON.stringify(record, null, 2) + "\n");
      }
      if (o.out) out(`${res.rows} rows (${res.frames} frames) of ${what} written to ${o.out}`);
      else console.error(`exported ${res.rows} rows (${res.frames} frames) of ${what}`);
    });

  program.command("status")
    .description("show per-point progress of a study database: done, failed, running, missing")
    .argument("<database>", "study database")
    .option("--results <dir>", "cluster results folder (default: <database name>-cluster/ beside it, if any)")
    .option("--json", "print the status as one JSON object (shape: README, 'Machine-readable output')")
    .addOption(
      new Option(
        "--watch [seconds]",
        "refresh every few seconds (default 5) until Ctrl-C or the study is finished",
      )
        .argParser(positiveInt("--watch")),
    )
    .action(async (dbPath, o) => {
      const controller = new AbortController();
      const stop = () => controller.abort();
      Deno.addSignalListener("SIGINT", stop);
      try {
        const watch = o.watch === true ? 5 : o.watch;
        const flags = { results: o.results, batch: cluster.slurmCommands(), json: o.json, watch };
        await statusCommand(dbPath, { ...flags, signal: controller.signal }, out);
      } finally {
        Deno.removeSignalListener("SIGINT", stop);
      }
    });

  program.command("demo")
    .description(
      "run a bundled demo study, analyse it and write its report: film-patch (2D, default: a neutral " +
        "vortex patch stirred into a slightly warm thin superfluid film, with a periodic-box decay study " +
        "that calibrates χ₂ for the Vinen-equation fit) or ring-burst (3D: vortex rings puffed into still " +
        "helium; a short illustration with 4 realisations per point)",
    )
    .addArgument(new Argument("[name]", "which demo").choices(Object.keys(DEMOS)).default("film-patch"))
    .addOption(new Option("-w, --workers <n>", "parallel workers (default: number of cores)").argParser(
      positiveInt("--workers"),
    ))
    .option("--out <dir>", "folder for the demo's database and report", "out/demo")
    .option("--fresh", "recompute everything", false)
    .action(async (name, o) => {
      const demo = DEMOS[name];
      await Deno.mkdir(o.out, { recursive: true });
      const runDemoStudy = async (path: string, role: string) => {
        const study = await loadNormalized(path);
        const dbPath = join(o.out, `${study.name}.sqlite`);
        out(`${role}: ${path}`);
        out(`  ${study.description.trim().split("\n")[0]}`);
        if (role === "demo study" && study.realisations < ANALYSIS_MIN_REALISATIONS) {
          out(
            `  note: a short illustration: ${study.realisations} realisations per point, below the ` +
              `${ANALYSIS_MIN_REALISATIONS} the analysis needs for trustworthy intervals; read its numbers as a demo`,
          );
        }
        const report = await runWithSignals(study, dbPath, {
          workers: o.workers ?? defaultWorkers(),
          fresh: o.fresh,
          keepFailed: false,
          quiet: false,
        });
        printRunReport(report, dbPath);
        if (report.interrupted) Deno.exitCode = 130;
        else if (report.failed) Deno.exitCode = 1;
        return { dbPath, ok: !report.interrupted && report.failed === 0 };
      };
      let chi2From: string | undefined;
      if (demo.decay) {
        const decay = await runDemoStudy(demo.decay.pathname, "decay study (χ₂ calibration)");
        if (Deno.exitCode === 130) return;
        if (decay.ok) chi2From = decay.dbPath;
      }
      const main = await runDemoStudy(demo.study.pathname, "demo study");
      if (Deno.exitCode === 130) return;
      const res = await analyseAndReport(main.dbPath, { out: defaultReportPath(main.dbPath), chi2From });
      for (const line of res.lines.filter((l) => !l.startsWith("next:"))) out(line);
      out(`report: ${res.html}`);
      out(`charts as SVG: ${res.svgDir}`);
    });

  return program;
}

/** True for the error of writing to a pipe whose reader has closed it. */
function isClosedOutput(e: unknown): boolean {
  return e instanceof Deno.errors.BrokenPipe ||
    (e instanceof Error && (e as { code?: string }).code === "EPIPE");
}

function fail(message: string, hint?: string, code = 1): void {
  console.error(`spindrift: ${message}`);
  if (hint) console.error(`hint: ${hint}`);
  Deno.exitCode = code;
}

export async function main(args: string[]): Promise<void> {
  const program = buildProgram();
  try {
    await program.parseAsync(args, { from: "user" });
  } catch (e) {
    if (isClosedOutput(e)) {
      // The reader went away (e.g. `| head`): stop quietly, as command-line tools do.
      Deno.exitCode = 0;
      return;
    }
    if (e instanceof CommanderError) {
      if (
        e.code === "commander.helpDisplayed" || e.code === "commander.version" || e.code === "commander.help"
      ) {
        Deno.exitCode = 0;
      } else Deno.exitCode = 2;
    } else if (e instanceof UserError) fail(e.message, e.hint);
    else if (e instanceof StoreError || e instanceof StoreReadError) fail(e.message);
    else if (e instanceof cluster.ExecutorError) fail(e.message, e.hint);
    else {
      const err = e as Error;
      fail(
        `internal error: ${err?.message ?? String(e)}`,
        "this is a bug in spindrift; rerun with SPINDRIFT_DEBUG=1 for details and report it",
        70,
      );
      if (Deno.env.get("SPINDRIFT_DEBUG") === "1") console.error(err?.stack);
    }
  }
}

if (import.meta.main) {
  await main(Deno.args);
}
