/** Test helpers of the cluster executor: a small real study and a scripted stand-in for Slurm. */
import type { BatchSystem, QueueSnapshot } from "./slurm.ts";
import type { Provenance } from "../runner.ts";
import { tempDir } from "../../test/_tmp.ts";

/** A small point-vortex study: 2 points × 3 realisations, well under a second each. */
export const SMALL_STUDY = `
name: cluster-small
description: Small study for the cluster executor tests.
engine: point-vortex-2d
parameters:
  initial: { kind: random-cloud, count: 16, polarity: 0, shape: uniform-disk, radius: 1.0, minSeparation: 0.05 }
  annihilationDistance: 0.01
sweep:
  grid:
    initial.count: [12, 16]
realisations: 3
seed: 4242
run: { duration: 0.6, sampleInterval: 0.05, tolerance: 1.0e-9 }
`;

export const TEST_PROVENANCE: Provenance = {
  toolVersion: "test",
  denoVersion: Deno.version.deno,
  gitCommit: null,
};

/** Writes the study into a fresh temporary folder; returns the folder and the study path. */
export function studyInTempDir(text = SMALL_STUDY): { dir: string; studyPath: string } {
  const dir = tempDir("spindrift-cluster-");
  const studyPath = `${dir}/study.yaml`;
  Deno.writeTextFileSync(studyPath, text);
  return { dir, studyPath };
}

/** A batch system that records submissions and answers queue requests from a script the test controls. */
export class FakeBatch implements BatchSystem {
  readonly submitted: string[] = [];
  queueState: Map<string, Map<number, string>> = new Map();
  nextJob = 100;
  failSubmit: string | null = null;
  failQueue: string | null = null;

  submit(scriptPath: string): Promise<string> {
    if (this.failSubmit !== null) return Promise.reject(new Error(this.failSubmit));
    this.submitted.push(scriptPath);
    return Promise.resolve(String(this.nextJob++));
  }

  queue(): Promise<QueueSnapshot> {
    if (this.failQueue !== null) return Promise.reject(new Error(this.failQueue));
    return Promise.resolve(this.queueState);
  }
}
