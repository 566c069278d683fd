/**
 * Study databases with known answers for the analysis tests, built through the real runner:
 * - `walkersDb`: examples/imported-walkers.yaml (24 realisations of 20 Ornstein–Uhlenbeck walkers, D = 0.25,
 *   τ = 0.1; test/imported/make_walkers.ts);
 * - `ballisticDb`: walkers moving in straight lines at constant speed (MSD ∝ t² at all times, so there is no
 *   diffusive regime), written as CSV files in the same format and imported the same way.
 */
import { RandomStream } from "../engines/random.ts";
import { loadNormalizedForTest, REPO, runForTest } from "./_study.ts";
import { WALKERS } from "./imported/make_walkers.ts";

/** Runs examples/imported-walkers.yaml into `dir`/walkers.sqlite; returns the database path. */
export async function walkersDb(dir: string): Promise<string> {
  const study = await loadNormalizedForTest(`${REPO}examples/imported-walkers.yaml`);
  const db = `${dir}/walkers.sqlite`;
  const report = await runForTest(study, db, 2);
  if (report.failed > 0 || report.completed !== WALKERS.realisations) {
    throw new Error(`walkers fixture: ${JSON.stringify(report)}`);
  }
  return db;
}

/** Ballistic data set: realisations × walkers moving at constant velocity v ~ N(0, 1) per component. */
export const BALLISTIC = Object.freeze({ realisations: 4, walkers: 12, times: 60, dt: 0.1 });

/** Writes the ballistic CSV files and study into `dir`, runs it into `dir`/ballistic.sqlite; returns its path. */
export async function ballisticDb(dir: string): Promise<string> {
  const { realisations, walkers, times, dt } = BALLISTIC;
  for (let r = 0; r < realisations; r++) {
    const rng = RandomStream.fromState([11, 23, 37, r + 1]);
    const x0 = Array.from({ length: walkers }, () => 2 * rng.normal());
    const y0 = Array.from({ length: walkers }, () => 2 * rng.normal());
    const vx = Array.from({ length: walkers }, () => rng.normal());
    const vy = Array.from({ length: walkers }, () => rng.normal());
    const lines = ["t,id,x,y,circulation"];
    for (let k = 0; k < times; k++) {
      const t = Number((k * dt).toFixed(10));
      for (let i = 0; i < walkers; i++) {
        lines.push(`${t},${i},${x0[i] + vx[i] * t},${y0[i] + vy[i] * t},${i % 2 === 0 ? 1 : -1}`);
      }
    }
    await Deno.writeTextFile(`${dir}/b${r}.csv`, lines.join("\n") + "\n");
  }
  const yaml = `name: ballistic-tracks
description: Walkers in straight lines at constant speed; the MSD grows as t² and never becomes diffusive.
engine: imported-tracks-2d
parameters:
  source:
    files: b{index}.csv
  timing:
    origin: first-record
    matchTolerance: 1.0e-6
realisations: ${realisations}
seed: 7
run:
  duration: ${Number(((times - 1) * dt).toFixed(10))}
  sampleInterval: ${dt}
observables:
  record: [cluster, evaporation, msd]
`;
  await Deno.writeTextFile(`${dir}/ballistic.yaml`, yaml);
  const study = await loadNormalizedForTest(`${dir}/ballistic.yaml`);
  const db = `${dir}/ballistic.sqlite`;
  const report = await runForTest(study, db, 2);
  if (report.failed > 0) throw new Error(`ballistic fixture: ${JSON.stringify(report.failures)}`);
  return db;
}
