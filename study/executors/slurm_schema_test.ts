import { assert, assertEquals, assertThrows } from "../../test/_assert.ts";
import {
  checkClusterFlags,
  CLUSTER_DEFAULTS,
  clusterSchema,
  clusterSectionOf,
  resolveClusterResources,
} from "./slurm_schema.ts";
import { ExecutorError } from "./errors.ts";
import type { NormalizedStudy } from "../normalize.ts";

Deno.test("resolveClusterResources: defaults, then the study's section, then flags", () => {
  assertEquals(resolveClusterResources(undefined), { ...CLUSTER_DEFAULTS });
  const r = resolveClusterResources(
    { partition: "short", timeLimit: "4:00:00", memory: "8G", extraLines: ["--qos=long"] },
    { memory: "16G", cpusPerTask: 2 },
  );
  assertEquals(r.partition, "short");
  assertEquals(r.timeLimit, "4:00:00");
  assertEquals(r.memory, "16G", "a flag overrides the study");
  assertEquals(r.cpusPerTask, 2);
  assertEquals(r.extraLines, ["--qos=long"]);
  assertEquals(r.account, undefined);
});

Deno.test("resolveClusterResources: a time limit in minutes becomes sbatch's minute form", () => {
  // sbatch(1), --time: "A time limit of zero requests that no time limit be imposed. Acceptable time formats
  // include "minutes", "minutes:seconds", "hours:minutes:seconds", "days-hours", "days-hours:minutes" and
  // "days-hours:minutes:seconds"."
  assertEquals(resolveClusterResources({ timeLimit: 90 }).timeLimit, "90");
});

Deno.test("clusterSchema: accepts every sbatch time format and refuses others", () => {
  // Formats from sbatch(1), option --time (Slurm 22.05 manual).
  for (const t of ["90", "90:30", "4:00:00", "2-12", "2-12:30", "2-12:30:00", "UNLIMITED"]) {
    assert(clusterSchema.safeParse({ timeLimit: t }).success, t);
  }
  for (const t of ["4h", "1:2:3:4", "-5", "", "1 day"]) {
    assert(!clusterSchema.safeParse({ timeLimit: t }).success, t);
  }
});

Deno.test("clusterSchema: memory takes sbatch's unit suffixes K M G T", () => {
  // sbatch(1), --mem: "Default units are megabytes. Different units can be specified using the suffix [K|M|G|T]."
  for (const m of ["500", "500M", "2G", "1T", "64K"]) {
    assert(clusterSchema.safeParse({ memory: m }).success, m);
  }
  for (const m of ["2GB", "2 G", "1.5G", "lots"]) assert(!clusterSchema.safeParse({ memory: m }).success, m);
});

Deno.test("clusterSchema: refuses unknown keys, multi-line extra lines and bad names", () => {
  assert(!clusterSchema.safeParse({ partitoin: "x" }).success, "unknown key");
  assert(!clusterSchema.safeParse({ extraLines: ["--qos=long\n#SBATCH --mem=1T"] }).success, "newline");
  assert(!clusterSchema.safeParse({ extraLines: ["module load x"] }).success, "not an option");
  assert(clusterSchema.safeParse({ extraLines: ["#SBATCH --constraint=intel&gpu"] }).success);
  assert(!clusterSchema.safeParse({ account: "a b" }).success, "space in account");
  assert(clusterSchema.safeParse({ partition: "short,long" }).success, "partition list");
  assert(!clusterSchema.safeParse({ cpusPerTask: 0 }).success);
  assert(!clusterSchema.safeParse({ sliceSize: 1.5 }).success);
});

Deno.test("checkClusterFlags: a bad flag value is named by its flag, with what is allowed", () => {
  const e = assertThrows(() => checkClusterFlags({ timeLimit: "4h" }), ExecutorError, '--time-limit "4h"');
  assert(e.message.includes("Slurm time limit"), e.message);
  assertThrows(
    () => checkClusterFlags({ extraLines: ["--ok", "nope"] }),
    ExecutorError,
    '--sbatch-line "nope"',
  );
  assertEquals(checkClusterFlags({ memory: "4G", partition: undefined }), { memory: "4G" });
});

Deno.test("clusterSectionOf: reads run.cluster when the study has one, else undefined", () => {
  const base = { run: { duration: 1, sampleInterval: 0.1, tolerance: 1e-9, maxDistance: 1e6 } };
  assertEquals(clusterSectionOf(base as unknown as NormalizedStudy), undefined);
  const withCluster = { run: { ...base.run, cluster: { partition: "p", cpusPerTask: 4 } } };
  assertEquals(clusterSectionOf(withCluster as unknown as NormalizedStudy), {
    partition: "p",
    cpusPerTask: 4,
  });
  const bad = { run: { ...base.run, cluster: { memory: "lots" } } };
  assertThrows(
    () => clusterSectionOf(bad as unknown as NormalizedStudy),
    ExecutorError,
    "run.cluster.memory",
  );
});
