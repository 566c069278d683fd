/**
 * One realisation of the Gross–Pitaevskii engine:
 *
 *   ground state (cached per worker) → vortices drawn and imprinted → cores relaxed (phase pinned)
 *   → optional damped preparation (tracked silently) → optional noise → t = 0
 *   → blocks of Strang steps; after each block: finiteness check, detection, tracking (events)
 *   → at every sample time: diagnostics and a frame (tracked vortices), field snapshots when asked
 *
 * Time: the study's times are in ξ²/κ; the integrator works in ξ/c (1 ξ/c = 2π ξ²/κ). A sample interval Δ is
 * cut into B tracking blocks (B = ⌈Δ/interval⌉) of S Strang steps (S = ⌈Δ/(B·timeStep)⌉), so the step is
 * Δ/(B·S) ≤ timeStep and frames land exactly on t = k·Δ.
 *
 * Invariant drift (γ = 0 only): drift.norm = max_t |N(t) − N(0)|/N(0), drift.energy = max_t |E(t) − E(0)|/|E(0)|
 * over the stored frames.
 *
 * @example
 * ```ts
 * const summary = simulate({ params, controls, rng }, sink);
 * summary.scalars.annihilations;
 * ```
 */
import { checkRunControls } from "../_controls.ts";
import { minimumSeparation } from "../_cloud.ts";
import { EngineFailure, type EngineRunInput, type EngineRunSummary, type FrameSink } from "../contract.ts";
import { Detections, VortexDetector } from "./detect.ts";
import { DiagnosticsWorkspace, emptyDiagnostics } from "./diagnostics.ts";
import { Fft2d } from "./fft2d.ts";
import { Grid } from "./grid.ts";
import { cachedGroundState, imprintAndRelax, initialVortices } from "./imprint.ts";
import { type GpParams, snapshotResolution, STUDY_TIME_PER_GP_TIME } from "./params.ts";
import { Relaxer } from "./relax.ts";
import { fieldSnapshot } from "./snapshot.ts";
import { SplitStep } from "./splitstep.ts";
import { Tracker } from "./track.ts";
import { trapPotential } from "./trap.ts";

/** Runs one realisation, streaming frames, events and snapshots into `sink`; returns the end scalars. */
export function simulate(input: EngineRunInput<GpParams>, sink: FrameSink): EngineRunSummary {
  const { params, controls, rng } = input;
  checkRunControls(controls, { usesTolerance: false });
  const grid = new Grid(params.grid.points, params.grid.spacing);
  const n = grid.n, m = n * n;
  const fft = new Fft2d(n);
  const potential = trapPotential(grid, params.trap);
  const relaxer = new Relaxer(grid, fft, potential);
  const stop = input.stop;
  if (stop) relaxer.onCheck = () => stop.check();
  const gs = cachedGroundState(relaxer, params);
  const periodic = params.trap.kind === "periodic";

  // Vortices, imprint, relaxation.
  const vortices = initialVortices(params, grid.side, rng);
  const psi = new Float64Array(2 * m);
  const relaxed = imprintAndRelax(relaxer, params, gs, vortices, {
    psi,
    cos: new Float64Array(m),
    sin: new Float64Array(m),
  });

  // Detection and tracking.
  const background = new Float64Array(m);
  for (let p = 0; p < m; p++) {
    background[p] = gs.psi[2 * p] * gs.psi[2 * p] + gs.psi[2 * p + 1] * gs.psi[2 * p + 1];
  }
  const detector = new VortexDetector(grid, background, params.detection.densityThreshold, periodic);
  const near = periodic ? null : boundaryNeighbourhood(grid, detector.mask, params.tracking.maxDisplacement);
  const tracker = new Tracker({
    maxDisplacement: params.tracking.maxDisplacement,
    pairDistance: params.tracking.pairDistance,
    grace: params.tracking.grace,
    periodicSide: periodic ? grid.side : 0,
    nearBoundary: near === null ? () => false : (x, y) => {
      const i = Math.floor((x - grid.coordinate(0)) / grid.h),
        j = Math.floor((y - grid.coordinate(0)) / grid.h);
      return i < 0 || j < 0 || i >= n || j >= n || near[j * n + i] === 1;
    },
  });
  const det = new Detections();
  detector.detect(psi, det);
  const imprintFound = tracker.start(det, vortices);
  const silent = () => {};

  // Time stepping layout.
  const dtSample = controls.sampleInterval;
  const frames = Math.floor((controls.duration / dtSample) * (1 + 1e-12));
  const blocks = Math.max(1, Math.ceil(dtSample / params.tracking.interval * (1 - 1e-12)));
  const stepsPerBlock = Math.max(1, Math.ceil(dtSample / (blocks * params.timeStep) * (1 - 1e-12)));
  const dt = dtSample / (blocks * stepsPerBlock); // study units
  const dtGp = dt / STUDY_TIME_PER_GP_TIME;

  // Optional damped preparation (vortices tracked silently, so ids survive it).
  const prep = params.preparation;
  if (prep.time > 0) {
    const prepStep = new SplitStep(grid, fft, potential, { gamma: prep.damping, dt: dtGp });
    const prepBlocks = Math.max(1, Math.round(prep.time / (dt * stepsPerBlock)));
    for (let b = 0; b < prepBlocks; b++) {
      input.stop?.check();
      prepStep.advance(psi, stepsPerBlock);
      assertFinite(psi, -prep.time + (b + 1) * dt * stepsPerBlock);
      detector.detect(psi, det);
      tracker.update(0, det, silent);
    }
  }
  if (params.noise > 0) {
    const a = params.noise / Math.SQRT2;
    for (let p = 0; p < m; p++) {
      const amp = a * Math.sqrt(background[p]);
      psi[2 * p] += amp * rng.normal();
      psi[2 * p + 1] += amp * rng.normal();
    }
    detector.detect(psi, det);
    tracker.update(0, det, silent);
  }

  const stepper = new SplitStep(grid, fft, potential, { gamma: params.damping, dt: dtGp });
  const diagWork = new DiagnosticsWorkspace(grid, fft, potential);
  const diag = emptyDiagnostics();
  const snaps = params.snapshots;
  const wantSnapshots = (input.realisationIndex ?? 0) < snaps.realisations && sink.snapshot !== undefined;
  const conservative = params.damping === 0;
  let n0 = 0, e0 = 0, driftN = 0, driftE = 0;

  const emit = (index: number, t: number): void => {
    diagWork.evaluate(psi, diag);
    if (index === 0) {
      n0 = diag.norm;
      e0 = diag.energy;
    }
    driftN = Math.max(driftN, Math.abs(diag.norm - n0) / n0);
    driftE = Math.max(driftE, Math.abs(diag.energy - e0) / Math.abs(e0));
    sink.frame({
      index,
      t,
      n: tracker.count,
      id: tracker.id,
      x: tracker.x,
      y: tracker.y,
      z: null,
      circulation: tracker.s,
      loop: null,
      marker: null,
      diagnostics: {
        norm: diag.norm,
        energy: diag.energy,
        kinetic_incompressible: diag.kineticIncompressible,
        kinetic_compressible: diag.kineticCompressible,
        quantum_pressure: diag.quantumPressure,
        vortex_count: tracker.count,
      },
    });
    const stored = index === 0 || index === frames || (snaps.stride > 0 && index % snaps.stride === 0);
    if (wantSnapshots && stored) {
      sink.snapshot!(fieldSnapshot(grid, psi, snapshotResolution(params), index, t));
    }
  };

  const initialCount = tracker.count;
  emit(0, 0);
  let steps = 0;
  for (let k = 1; k <= frames; k++) {
    for (let b = 0; b < blocks; b++) {
      input.stop?.check(); // between blocks of steps (one tracking interval, well under 0.1 s at 256²)
      stepper.advance(psi, stepsPerBlock);
      steps += stepsPerBlock;
      const t = b + 1 === blocks ? k * dtSample : (k - 1) * dtSample + (b + 1) * stepsPerBlock * dt;
      assertFinite(psi, t);
      detector.detect(psi, det);
      tracker.update(t, det, (e) => sink.event(e));
    }
    emit(k, k * dtSample);
  }
  tracker.finish((e) => sink.event(e));

  const c = tracker.counts;
  const scalars: Record<string, number> = {
    steps,
    time_step: dt,
    tracking_interval: dt * stepsPerBlock,
    ground_state_mu: gs.mu,
    ground_state_norm: gs.norm,
    ground_state_residual: gs.residual,
    ground_state_iterations: gs.iterations,
    relaxed_mu: relaxed.mu,
    relaxed_norm: relaxed.norm,
    imprinted_count: vortices.n,
    imprint_found: imprintFound,
    initial_count: initialCount,
    final_count: tracker.count,
    annihilations: c.annihilations,
    wall_exits: c.wallExits,
    disappearances: c.disappearances,
    pair_creations: c.pairCreations,
    wall_entries: c.wallEntries,
    appearances: c.appearances,
    annihilation_separation_mean: c.annihilations > 0 ? c.annihilationSeparationSum / c.annihilations : NaN,
  };
  if (vortices.density !== null) scalars.initial_density = vortices.density;
  const dMin = minimumSeparation(vortices.n, vortices.x, vortices.y, periodic ? grid.side : 0);
  if (Number.isFinite(dMin)) scalars.min_separation_initial = dMin;
  if (conservative) {
    scalars["drift.norm"] = driftN;
    scalars["drift.energy"] = driftE;
  }
  return { scalars };
}

/** Fails the realisation with kind "nan" when ψ holds a non-finite value. */
function assertFinite(psi: Float64Array, t: number): void {
  let s = 0;
  for (let p = 0; p < psi.length; p++) s += psi[p] * psi[p];
  if (!Number.isFinite(s)) {
    throw new EngineFailure(
      "nan",
      `the wavefunction became non-finite at t = ${t} (time step too large for the grid, or a bad potential)`,
      t,
    );
  }
}

/**
 * Plaquettes within `distance` (square neighbourhood) of a plaquette the detector ignores: where a vortex that
 * vanishes or appears is "at the wall".
 */
function boundaryNeighbourhood(grid: Grid, mask: Uint8Array, distance: number): Uint8Array {
  const n = grid.n, r = Math.ceil(distance / grid.h);
  const rows = new Uint8Array(n * n), out = new Uint8Array(n * n);
  for (let j = 0; j < n; j++) {
    for (let i = 0; i < n; i++) {
      let hit = 0;
      for (let d = -r; d <= r && hit === 0; d++) {
        const q = i + d;
        if (q < 0 || q >= n || mask[j * n + q] === 0) hit = 1;
      }
      rows[j * n + i] = hit;
    }
  }
  for (let j = 0; j < n; j++) {
    for (let i = 0; i < n; i++) {
      let hit = 0;
      for (let d = -r; d <= r && hit === 0; d++) {
        const q = j + d;
        if (q < 0 || q >= n || rows[q * n + i] === 1) hit = 1;
      }
      out[j * n + i] = hit;
    }
  }
  return out;
}
