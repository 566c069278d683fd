/**
 * The spindrift command line. Thin: parse arguments, call the library, map errors to exit codes.
 * Exit codes: 0 ok, 1 the work failed (bad study, failed realisations, missing database, analysis errors),
 * 2 wrong usage, 130 stopped by Ctrl-C (SIGINT), 143 stopped by SIGTERM, 70 internal error.
 */
import { Argument, Command, CommanderError, Option } from "@commander-js/extra-typings";
import { dirname, join, resolve } from "node:path";
import { loadStudy } from "../study/load.ts";
import { formatProblems } from "../study/problems.ts";
import { type NormalizedStudy, normalizeStudy } from "../study/normalize.ts";
import { type RunReport, runStudy } from "../study/runner.ts";
import { describeFirstRealisation } from "../study/describe.ts";
import { preflight, PreflightRefused } from "../study/preflight.ts";
import { createProgress } from "../study/progress.ts";
import { salvageHint, StoreError } from "../store/db.ts";
import { salvageDatabase } from "../store/salvage.ts";
import { verifyDatabase } from "../store/verify.ts";
import { StoreReadError } from "../store/reads.ts";
import { provenance, TOOL_VERSION } from "./provenance.ts";
import { UserError } from "./errors.ts";
import {
  DEFAULT_MAX_ROWS,
  DEFAULT_TIME_LIMIT_S,
  openReadOnly,
  type QueryFormat,
  QueryTimeLimit,
  runQuery,
} from "./query.ts";
import { describeTarget, type ExportFormat, exportProvenance, exportRealisation } from "./export.ts";
import { analyseAndReport, analyseCommand, replicateCount } from "./analyse.ts";
import { compareCommand } from "./compare.ts";
import { positiveNumber, reportCommand } from "./report.ts";
import { ensembleCsv, type EnsembleTable } from "./ensemble_export.ts";
import { isSignalExit, SIGNAL_EXIT, withStopSignals } from "./signals.ts";
import * as cluster from "../study/executors/mod.ts";
import { starterEngines } from "../study/starter.ts";
import { newStudyCommand } from "./new.ts";
import { checkReport } from "./check.ts";
import { statusCommand } from "./status.ts";
import { describeUnits } from "../study/units.ts";
import { MIN_REALISATIONS } from "../analysis/estimators/bootstrap.ts";
import { auditCommand, parseFraction, pilotCommand, untilCommand } from "./credibility.ts";
import { storedPilotLines } from "../credibility/pilot.ts";

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

function nonNegativeInt(name: string) {
  return (v: string): number => {
    const n = Number(v);
    if (v.trim() === "" || !Number.isInteger(n) || n < 0) {
      throw new UserError(`${name} must be a whole number ≥ 0, got '${v}'`);
    }
    return n;
  };
}

function nonNegative(name: string) {
  return (v: string): number => {
    const n = Number(v);
    if (v.trim() === "" || !Number.isFinite(n) || n < 0) {
      throw new UserError(`${name} must be a number ≥ 0, got '${v}'`);
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
        : loaded.problems.every((p) => p.code === "not-utf8")
        ? "save the file as UTF-8 (most editors offer the encoding under 'Save as'), then run: spindrift check " +
          path
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

/** Runs a study with Ctrl-C/SIGTERM handling; returns the run report and the exit status it calls for. */
async function runWithSignals(
  study: NormalizedStudy,
  dbPath: string,
  opts: {
    workers: number;
    fresh: boolean;
    keepFailed: boolean;
    quiet: boolean;
    allowOtherStudy?: boolean;
    force?: boolean;
  },
): Promise<{ report: RunReport; exitCode: number }> {
  const { value: report, stoppedBy } = await withStopSignals((signal) =>
    runStudy(study, {
      dbPath,
      workers: opts.workers,
      fresh: opts.fresh,
      keepFailed: opts.keepFailed,
      allowOtherStudy: opts.allowOtherStudy,
      force: opts.force,
      progress: createProgress({ quiet: opts.quiet }),
      provenance: provenance(),
      signal,
      onNote: (line) => console.error(`spindrift: ${line}`),
    })
  );
  const exitCode = report.interrupted ? SIGNAL_EXIT[stoppedBy ?? "SIGINT"] : report.failed ? 1 : 0;
  return { report, exitCode };
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
  spindrift pilot my-study.yaml        its first realisations: cost, time, database size, precision against N
  spindrift run my-study.yaml          run or resume it (database next to the study file)
  spindrift run my-study.yaml --until evaporated=10%   …or until a result is known to ±10 % (Stein's rule)
  spindrift run my-study.yaml --cluster    or submit it as a Slurm job array; then:
  spindrift collect my-study.yaml      fold the cluster's results into the database
  spindrift analyse my-study.sqlite    estimate D/κ, evaporation and losses with bootstrap intervals
  spindrift audit my-study.sqlite      rerun a few realisations with finer numerics: would the answer move?
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
      const v = preflight(study, {
        dbPath: defaultDbPath(path, study),
        workers: study.run.workers ?? defaultWorkers(),
        force: true,
      });
      for (const line of v.lines) out(`  ${line}`);
      for (const line of storedPilotLines(defaultDbPath(path, study), study.hash)) out(`  ${line}`);
      for (const w of v.warnings) out(`  warning: ${w}`);
      if (v.refusals.length > 0) {
        for (const r of v.refusals) out(`  too large: ${r}`);
        throw new UserError(
          `${path}: 'spindrift run' would refuse this study (${v.refusals.length} hard limit` +
            `${v.refusals.length === 1 ? "" : "s"} above)`,
          "change the study as said above, or run it anyway with: spindrift run --force " + path,
        );
      }
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
    .option(
      "--allow-other-study",
      "run into a database made for a study of another name (e.g. after renaming the study); nothing stored " +
        "is deleted",
      false,
    )
    .option("-q, --quiet", "no progress output", false)
    .option("--force", "run even when the pre-flight estimate exceeds the free disk space or memory", false)
    .option(
      "--until <result=target>",
      "after the study's realisations (the first stage), add realisations until RESULT's 95 % interval has " +
        "the half-width TARGET: D, evaporated, cluster_radius, vortex_count, line_length, centre_speed, " +
        "msd_final or scalar:<name>, e.g. evaporated=10% or D=0.02 (Stein's two-stage rule: the total is " +
        "fixed by the first stage)",
    )
    .addOption(
      new Option(
        "--max-realisations <n>",
        "with --until: most realisations per point (default max(100, 10 × the study's))",
      )
        .argParser(positiveInt("--max-realisations")),
    )
    .addOption(
      new Option(
        "--batch <n>",
        "with --until: realisations added per point between progress lines (default: the study's)",
      )
        .argParser(positiveInt("--batch")),
    )
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
        if (o.until !== undefined) {
          throw new UserError(
            "--until runs on this machine only (its second stage depends on the first one's results)",
            "run the first stage with --cluster, collect it, then run --until here, or use 'spindrift pilot' to " +
              "choose the realisations before submitting",
          );
        }
        // The login node plans the study and the database collects it: check the sizes here too.
        for (const w of preflight(study, { dbPath, workers: 1, force: o.force }).warnings) {
          console.error(`spindrift: warning: ${w}`);
        }
        const flags = { ...o, dbPath, extraLines: o.sbatchLine, launcher: LAUNCHER };
        Deno.exitCode = await cluster.clusterRunCommand(study, flags, clusterEnv());
        return;
      }
      if (o.until !== undefined) {
        Deno.exitCode = await untilCommand(study, {
          dbPath,
          workers: o.workers ?? study.run.workers ?? defaultWorkers(),
          until: o.until,
          cap: o.maxRealisations,
          batch: o.batch,
          fresh: o.fresh,
          keepFailed: o.keepFailed,
          quiet: o.quiet,
          allowOtherStudy: o.allowOtherStudy,
          force: o.force,
        }, out);
        return;
      }
      if (o.maxRealisations !== undefined || o.batch !== undefined) {
        throw new UserError("--max-realisations and --batch go with --until");
      }
      const { report, exitCode } = await runWithSignals(study, dbPath, {
        workers: o.workers ?? study.run.workers ?? defaultWorkers(),
        fresh: o.fresh,
        keepFailed: o.keepFailed,
        quiet: o.quiet,
        allowOtherStudy: o.allowOtherStudy,
        force: o.force,
      });
      printRunReport(report, dbPath);
      Deno.exitCode = exitCode;
      if (!report.interrupted) {
        out(`next: spindrift analyse ${dbPath}   (D/κ with intervals), then spindrift report ${dbPath}`);
      }
    });

  program.command("pilot")
    .description(
      "run the first few realisations of every parameter point and project the whole study: CPU time, peak " +
        "memory and database growth per realisation, time with your workers and as a Slurm array, and the " +
        "95 % half-width of D (only where the pilot shows a diffusive regime), the evaporation count and the " +
        "other end-of-run results against the number of realisations, with a recommended count",
    )
    .argument("<study>", "study file (YAML)")
    .option("--db <path>", "database file (default: <study name>.sqlite next to the study file)")
    .addOption(
      new Option("-n, --realisations <n>", "pilot realisations per point (default 8; the study's first ones)")
        .argParser(positiveInt("--realisations")),
    )
    .addOption(
      new Option(
        "-w, --workers <n>",
        "parallel workers (default: the study's run.workers, else number of cores)",
      )
        .argParser(positiveInt("--workers")),
    )
    .addOption(
      new Option(
        "--target <precision>",
        "relative 95 % half-width to recommend a realisation count for, e.g. 10% or 0.05 (default 10%)",
      ).argParser(parseFraction("--target")),
    )
    .option("--allow-other-study", "run into a database made for a study of another name", false)
    .option("-q, --quiet", "no progress output", false)
    .action(async (path, o) => {
      const study = await loadNormalized(path);
      if (o.realisations !== undefined && o.realisations < 2) {
        throw new UserError("--realisations must be ≥ 2");
      }
      Deno.exitCode = await pilotCommand(study, {
        dbPath: o.db ?? defaultDbPath(path, study),
        workers: o.workers ?? study.run.workers ?? defaultWorkers(),
        realisations: o.realisations,
        target: o.target,
        allowOtherStudy: o.allowOtherStudy,
        quiet: o.quiet,
      }, out);
    });

  program.command("collect")
    .description("fold the shards of a cluster run into the study database (any time, as often as wanted)")
    .argument("<study>", "study file (YAML) submitted with 'spindrift run --cluster'")
    .option("--db <path>", "database file (default: <study name>.sqlite next to the study file)")
    .option("--results <dir>", "cluster results folder (default: <database name>-cluster/ beside it)")
    .option("--allow-other-study", "collect into a database made for a study of another name", false)
    .action(async (path, o) => {
      const study = await loadNormalized(path);
      const flags = {
        dbPath: o.db ?? defaultDbPath(path, study),
        results: o.results,
        allowOtherStudy: o.allowOtherStudy,
      };
      Deno.exitCode = await cluster.collectCommand(study, flags, clusterEnv());
    });

  program.command("run-slice", { hidden: true })
    .description("run one slice of a cluster submission into its shard (what each array task runs)")
    .argument("<manifest>", "manifest.json of the submission")
    .requiredOption("--slice <k>", "slice index (the array task index)")
    .requiredOption("--shard <file>", "shard database to write")
    .addOption(new Option("-w, --workers <n>", "realisations at once").argParser(positiveInt("--workers")))
    .action(async (manifest, o) => {
      // A batch system's time limit sends SIGTERM: finished realisations stay in the shard, the rest is
      // submitted again by the next 'run --executor slurm'.
      const { value, stoppedBy } = await withStopSignals(
        (signal) =>
          cluster.runSliceCommand(manifest, { ...o, signal }, { write: out, provenance: provenance() }),
        { stopping: "stopping: the realisations in progress are left for the next submission" },
      );
      Deno.exitCode = stoppedBy ? SIGNAL_EXIT[stoppedBy] : value;
    });

  program.command("report")
    .description(
      "write the study's report page (self-contained HTML, works offline) and each chart as a figure (SVG, " +
        "the plotted data as CSV, PNG on request); during a run, a provisional page of the done realisations",
    )
    .argument("<database>", "study database written by 'spindrift run'")
    .option("-o, --out <file>", "HTML file to write (default: next to the database)")
    .option("--png", "also write every chart as PNG (for papers; see --figure-width, --font-scale)", false)
    .addOption(
      new Option(
        "--figure-width <px>",
        "width of the exported figures' plots in pixels (default: as on the page)",
      )
        .argParser(positiveInt("--figure-width")),
    )
    .addOption(
      new Option("--figure-height <px>", "height of the exported figures' plots in pixels")
        .argParser(positiveInt("--figure-height")),
    )
    .addOption(
      new Option("--font-scale <x>", "multiply the figures' font sizes by x (default 1)")
        .argParser(positiveNumber("--font-scale", 5)),
    )
    .addOption(
      new Option("--png-scale <x>", "PNG pixels per figure pixel (default 2)").argParser(
        positiveNumber("--png-scale", 16),
      ),
    )
    .option("--no-live", "for an unfinished run, show only what is stored (no provisional analysis)")
    .action(async (dbPath, o) => {
      openReadOnly(dbPath).close();
      const lines = await reportCommand(dbPath, {
        out: o.out ?? defaultReportPath(dbPath),
        live: o.live,
        png: o.png,
        width: o.figureWidth,
        height: o.figureHeight,
        fontScale: o.fontScale,
        pngScale: o.pngScale,
      });
      for (const l of lines) out(l);
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
    .option(
      "--json",
      "print the results as one JSON object (shape in README: Machine-readable output)",
      false,
    )
    .action(async (dbPath, o) => {
      openReadOnly(dbPath).close();
      const { lines, errors } = await analyseCommand(dbPath, o);
      for (const line of lines) out(line);
      if (errors.length > 0) Deno.exitCode = 1;
    });

  program.command("audit")
    .description(
      "would the answer move with finer numerics? rerun a subset of each point's realisations with the same " +
        "seeds and refined numerics (2D: tolerance ÷10, step cap at its default or ÷10; 3D: spacing δ/2, " +
        "time-step factor ÷2, opening angle ÷2; GP: grid spacing and time step ÷2), or with the annihilation " +
        "(3D: reconnection) distance ×½ and ×2 (--pass physics); store them in <database>-audit.sqlite and " +
        "report paired differences, flagging 'numerics not converged'",
    )
    .argument("<database>", "study database written by 'spindrift run'")
    .addOption(
      new Option("--pass <pass>", "numerics (default), physics, or both").choices([
        "numerics",
        "physics",
        "both",
      ])
        .default("numerics"),
    )
    .addOption(
      new Option(
        "--subset <n>",
        "realisations per point to rerun (default: what the budget allows, ≥ --min-pairs)",
      )
        .argParser(positiveInt("--subset")),
    )
    .addOption(
      new Option("--budget <share>", "share of the study's compute the audit may use per pass (default 25%)")
        .argParser(parseFraction("--budget")),
    )
    .addOption(
      new Option("--min-pairs <n>", "fewest pairs per point whatever the budget (default 4)").argParser(
        positiveInt("--min-pairs"),
      ),
    )
    .addOption(
      new Option(
        "--accept <fraction>",
        "relative shifts below this are accepted whatever the statistics (default 1%)",
      ).argParser(parseFraction("--accept")),
    )
    .option("--audit-db <path>", "database for the reruns (default: <database>-audit.sqlite beside it)")
    .addOption(
      new Option("-w, --workers <n>", "parallel workers (default: number of cores)").argParser(
        positiveInt("--workers"),
      ),
    )
    .addOption(
      new Option("--study <id>", "study revision id (default: the latest)").argParser(positiveInt("--study")),
    )
    .option("-q, --quiet", "no progress output", false)
    .action(async (dbPath, o) => {
      if (!/\.ya?ml$/i.test(dbPath)) openReadOnly(dbPath).close();
      Deno.exitCode = await auditCommand(dbPath, {
        pass: o.pass as "numerics" | "physics" | "both",
        subset: o.subset,
        budget: o.budget,
        minPairs: o.minPairs,
        accept: o.accept,
        auditDb: o.auditDb,
        workers: o.workers ?? defaultWorkers(),
        study: o.study,
        quiet: o.quiet,
      }, out);
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
    .addOption(
      new Option("--time-limit <seconds>", `stop the query after this long (0: no limit)`)
        .default(DEFAULT_TIME_LIMIT_S).argParser(nonNegative("--time-limit")),
    )
    .addOption(
      new Option("--max-rows <n>", "stop after this many rows").default(DEFAULT_MAX_ROWS)
        .argParser(positiveInt("--max-rows")),
    )
    .action(async (dbPath, sql, o) => {
      openReadOnly(dbPath).close();
      try {
        out(
          await runQuery(dbPath, sql, o.format as QueryFormat, {
            timeLimitSeconds: o.timeLimit,
            maxRows: o.maxRows,
          }),
        );
      } catch (e) {
        // SQLite cannot be interrupted: the abandoned worker may still be computing, so end the process here.
        if (e instanceof QueryTimeLimit && import.meta.main) {
          fail(e.message, e.hint);
          Deno.exit(1);
        }
        throw e;
      }
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
    .addOption(
      new Option(
        "--ensemble <table>",
        "instead of frames, the ensemble level as CSV: 'results' (every stored result with its interval and " +
          "unit) or 'series' (per point and frame: n, mean, sd and interval of each series)",
      ).choices(["results", "series"]),
    )
    .action(async (dbPath, o) => {
      if (o.ensemble !== undefined) {
        openReadOnly(dbPath).close();
        const output = lazyOutput(o.out);
        try {
          await output.write(new TextEncoder().encode(ensembleCsv(dbPath, o.ensemble as EnsembleTable)));
        } finally {
          output.close();
        }
        if (o.out) out(`ensemble ${o.ensemble} written to ${o.out}`);
        return;
      }
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

  program.command("verify")
    .description("check a study database thoroughly (SQLite's full integrity check, read-only)")
    .argument("<database>", "study database")
    .action((dbPath) => {
      const v = verifyDatabase(dbPath);
      const counts = v.realisations === null
        ? "realisations unreadable"
        : Object.entries(v.realisations).map(([s, n]) => `${n} ${s}`).join(", ") || "no realisations";
      if (v.problems.length === 0) {
        out(`${dbPath}: sound (full integrity check passed; schema version ${v.version}; ${counts})`);
        return;
      }
      out(`${dbPath}: DAMAGED: ${v.problems.length} problem(s) found by SQLite's integrity check:`);
      for (const p of v.problems.slice(0, 20)) out(`  ${p}`);
      if (v.problems.length > 20) out(`  … and ${v.problems.length - 20} more`);
      throw new UserError(`${dbPath} is damaged`, salvageHint(dbPath));
    });

  program.command("salvage")
    .description("copy every readable realisation of a damaged study database into a new, sound file")
    .argument("<database>", "the damaged study database (only read)")
    .option("-o, --out <file>", "new database to write (default: <name>-salvaged.sqlite beside it)")
    .action((dbPath, o) => {
      const target = o.out ?? dbPath.replace(/\.(sqlite3?|db)$/i, "") + "-salvaged.sqlite";
      const r = salvageDatabase(dbPath, target);
      out(
        `salvaged ${
          r.done + r.failed
        } realisations (${r.done} done, ${r.failed} failed) of ${dbPath} into ${target}` +
          ` with ${r.studies} study revision(s) and ${r.points} point(s)`,
      );
      if (r.unfinished) {
        out(`  ${r.unfinished} unfinished realisation(s) left out: run the study again to compute them`);
      }
      for (const u of r.unreadable.slice(0, 20)) {
        out(`  unreadable: ${u.id === null ? "" : `realisation id ${u.id}: `}${u.reason}`);
      }
      if (r.unreadable.length > 20) out(`  … and ${r.unreadable.length - 20} more unreadable`);
      if (r.skippedRows) out(`  ${r.skippedRows} study, point or link row(s) could not be read`);
      out("ensemble results are not copied: run spindrift analyse on the new file");
      out(
        `next: spindrift run STUDY.yaml --db ${target}   (computes what was lost), then analyse and report`,
      );
      if (r.targetProblems.length > 0) {
        throw new UserError(
          `the new file fails its integrity check: ${r.targetProblems.slice(0, 3).join("; ")}`,
        );
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
        if (role === "demo study" && study.realisations < MIN_REALISATIONS) {
          out(
            `  note: a short illustration: ${study.realisations} realisations per point, below the ` +
              `${MIN_REALISATIONS} the analysis needs for trustworthy intervals; read its numbers as a demo`,
          );
        }
        const { report, exitCode } = await runWithSignals(study, dbPath, {
          workers: o.workers ?? defaultWorkers(),
          fresh: o.fresh,
          keepFailed: false,
          quiet: false,
        });
        printRunReport(report, dbPath);
        Deno.exitCode = exitCode;
        return { dbPath, ok: !report.interrupted && report.failed === 0 };
      };
      let chi2From: string | undefined;
      if (demo.decay) {
        const decay = await runDemoStudy(demo.decay.pathname, "decay study (χ₂ calibration)");
        if (isSignalExit(Deno.exitCode)) return;
        if (decay.ok) chi2From = decay.dbPath;
      }
      const main = await runDemoStudy(demo.study.pathname, "demo study");
      if (isSignalExit(Deno.exitCode)) return;
      const res = await analyseAndReport(main.dbPath, { out: defaultReportPath(main.dbPath), chi2From });
      for (const line of res.lines.filter((l) => !l.startsWith("next:"))) out(line);
      if (res.errors.length > 0) Deno.exitCode = 1;
      out(`report: ${res.html}`);
      out(`figures (SVG and the plotted data as CSV): ${res.figuresDir}`);
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
    // Stopped by a signal: end now, even if a worker stuck in one long engine step has not ended yet (every
    // finished realisation is committed; nothing is left to write).
    if (import.meta.main && isSignalExit(Deno.exitCode)) Deno.exit(Deno.exitCode);
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
    else if (e instanceof StoreError || e instanceof StoreReadError) fail(e.message, e.hint);
    else if (e instanceof cluster.ExecutorError) fail(e.message, e.hint);
    else if (e instanceof PreflightRefused) {
      fail(
        e.message,
        "change the study as said, or run it anyway with --force (the estimate may be pessimistic)",
      );
    } else {
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
