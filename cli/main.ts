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
import { studyStatus } from "../store/status.ts";
import { writeReport } from "../reports/mod.ts";
import { provenance, TOOL_VERSION } from "./provenance.ts";
import { UserError } from "./errors.ts";
import { openReadOnly, type QueryFormat, runQuery } from "./query.ts";
import { type ExportFormat, exportRealisation } from "./export.ts";
import { analyseAndReport, analyseCommand, replicateCount } from "./analyse.ts";
import { compareCommand } from "./compare.ts";
import * as cluster from "../study/executors/mod.ts";

const REPO = new URL("../", import.meta.url);
/** The bundled demo studies; `decay` is a homogeneous-decay study run first to calibrate χ₂ (Vinen fit). */
const DEMOS: Readonly<Record<string, { readonly study: URL; readonly decay?: URL }>> = {
  "film-patch": {
    study: new URL("examples/film-patch.yaml", REPO),
    decay: new URL("examples/film-decay.yaml", REPO),
  },
  "ring-burst": { study: new URL("examples/ring-burst.yaml", REPO) },
};
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

function collectValues(value: string, previous: string[] | undefined): string[] {
  return [...(previous ?? []), value];
}

function defaultWorkers(): number {
  return navigator.hardwareConcurrency || 1;
}

/** Loads, validates and normalizes a study file, or throws a UserError listing every problem. */
async function loadNormalized(path: string): Promise<NormalizedStudy> {
  const loaded = await loadStudy(path);
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
  spindrift check my-study.yaml        validate the study file (every problem, with line numbers)
  spindrift run my-study.yaml          run or resume it (database next to the study file)
  spindrift run my-study.yaml --executor slurm    or submit it as a Slurm job array; then:
  spindrift collect my-study.yaml      fold the cluster's results into the database
  spindrift analyse my-study.sqlite    estimate D/κ, evaporation and losses with bootstrap intervals
  spindrift report my-study.sqlite     write the HTML report page
  spindrift query my-study.sqlite "SELECT status, COUNT(*) FROM realisations GROUP BY status"
  spindrift demo                       run the bundled demo study and write its report`,
    );

  program.command("check")
    .description("validate a study file and show what it would run (nothing is computed)")
    .argument("<study>", "study file (YAML)")
    .action(async (path) => {
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
    .addOption(
      new Option("--executor <where>", "local (this machine's workers) or slurm (a job array on a cluster)")
        .choices(["local", "slurm"]).default("local"),
    )
    .optionsGroup("Cluster options (with --executor slurm; see README, 'Running on a cluster'):")
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
      if (cluster.checkExecutorOptions(o) === "slurm") {
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
    .argument("<study>", "study file (YAML) submitted with 'spindrift run --executor slurm'")
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
      "estimate ν′ = D/κ with bootstrap intervals where the evidence shows a diffusive regime (survivor " +
        "average, fixed cohort and lag increments must agree; otherwise 'no diffusive regime' with the " +
        "reasons), compare the parameter points, fit the Vinen equation with its loss term, measure " +
        "evaporation and losses, and store everything in the database",
    )
    .argument("<database>", "study database written by 'spindrift run'")
    .addOption(
      new Option("-B, --replicates <n>", "bootstrap replicates of the diffusion estimators (default 2000)")
        .argParser(replicateCount("--replicates")),
    )
    .option("--seed <text>", "base of the bootstrap seeds (default: the study hash, so reruns agree)")
    .option(
      "--chi2-from <database>",
      "estimate χ₂ from a homogeneous decay study (periodic box; 1/L linear in t) and use it, with its " +
        "interval, as a prior of the Vinen fit's loss term (default: χ₂ fitted freely with D)",
    )
    .option(
      "--chi2 <x>",
      "fix χ₂ of the Vinen equation at x (a hypothesis: the fit is rejected if it does not fit)",
    )
    .addOption(
      new Option("--vinen-replicates <n>", "bootstrap replicates of the Vinen fit (default 200)")
        .argParser(replicateCount("--vinen-replicates")),
    )
    .addOption(
      new Option("-w, --workers <n>", "parameter points analysed in parallel (default: number of cores)")
        .argParser(positiveInt("--workers")),
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
    .description("write one realisation's frames: one row per vortex per frame (time, id, position, label)")
    .argument("<database>", "study database")
    .requiredOption("-r, --realisation <id>", "realisation id (column id of table realisations)")
    .addOption(new Option("-f, --format <format>", "output format").choices(["csv", "jsonl"]).default("csv"))
    .option("-o, --out <file>", "file to write (default: standard output)")
    .action(async (dbPath, o) => {
      const id = positiveInt("--realisation")(o.realisation);
      const file = o.out ? await Deno.open(o.out, { write: true, create: true, truncate: true }) : null;
      const target = file ?? Deno.stdout;
      const writer = {
        async write(chunk: Uint8Array) {
          let off = 0;
          while (off < chunk.length) off += await target.write(chunk.subarray(off));
        },
      };
      try {
        const rows = await exportRealisation(dbPath, id, o.format as ExportFormat, writer);
        if (o.out) out(`${rows} rows written to ${o.out}`);
      } finally {
        file?.close();
      }
    });

  program.command("status")
    .description("show per-point progress of a study database: done, failed, running, missing")
    .argument("<database>", "study database")
    .option("--results <dir>", "cluster results folder (default: <database name>-cluster/ beside it, if any)")
    .action(async (dbPath, o) => {
      const db = openReadOnly(dbPath);
      try {
        const flags = { dbPath, results: o.results, batch: cluster.slurmCommands() };
        const lines = await cluster.clusterStatusLines(db, flags);
        if (lines) return lines.forEach((l) => out(l));
        const s = studyStatus(db);
        if (!s) throw new UserError(`${dbPath} holds no study yet`, "run one with: spindrift run STUDY.yaml");
        out(`study ${s.name} (last run ${s.lastRunAt ?? "never"})`);
        const w = Math.max(5, ...s.points.map((p) => p.label.length));
        out(`  ${"point".padEnd(w)}  done  failed  running  missing`);
        for (const p of s.points) {
          out(
            `  ${p.label.padEnd(w)}  ${String(p.done).padStart(4)}  ${String(p.failed).padStart(6)}  ` +
              `${String(p.running).padStart(7)}  ${String(p.missing).padStart(7)}`,
          );
        }
      } finally {
        db.close();
      }
    });

  program.command("demo")
    .description(
      "run a bundled demo study, analyse it and write its report: film-patch (2D, default: a neutral " +
        "vortex patch stirred into a slightly warm thin superfluid film, with a periodic-box decay study " +
        "that calibrates χ₂ for the Vinen-equation fit) or ring-burst (3D: vortex rings puffed into still " +
        "helium)",
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
