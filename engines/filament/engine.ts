/**
 * The `vortex-filament-3d` engine: quantized vortex filaments in 3D (Schwarz model) with desingularised
 * Biot–Savart (direct or Barnes–Hut tree) or LIA, RK4 steps tied to the spacing, remeshing, Type II
 * reconnections, mutual friction with a prescribed normal fluid, unbounded or periodic domain.
 *
 * One realisation: parameters → initial loops (ring, ring pair, helix, ring ball, loops given or read from a file;
 * generated shapes use spacing (δ_min + δ)/2) → spacing brought into [δ_min, δ] → frames at t = k·Δt_sample (k = 0..⌊duration/Δt_sample⌋; steps are
 * clamped to land on them) → end scalars. Events (reconnection, loop removal, marker transfer, heater
 * absorption) go to the sink as they happen.
 *
 * Initial scalars: `initial_line_density` is measured, not nominal: total line length after the initial
 * remesh divided by the volume of a ball — the cloud ball (ring-ball), the periodic box (periodic domain), or
 * otherwise the smallest ball about the length-weighted centroid containing every point.
 * `initial_rms_radius` is the length-weighted RMS distance of the points from that centroid.
 *
 * Drifts: `drift.impulse` = |P(T) − P(0)| / Σ_loops|P_loop(0)| and `drift.energy` = |E(T) − E(0)|/|E(0)| are
 * reported for runs in the unbounded domain without friction or external flow (the only ones where they are
 * conserved); reconnections and loop removals also change them, so they are integrator checks only when
 * `reconnections` and `loops_removed` are 0.
 *
 * @example
 * ```ts
 * import { filamentEngine } from "./engine.ts";
 * const params = filamentEngine.paramsSchema.parse({
 *   units: "dimensionless", coreRadius: 1e-4, resolution: 0.1, initial: { kind: "ring", radius: 1 },
 * });
 * ```
 */
import { checkRunControls } from "../_controls.ts";
import { EngineFailure } from "../contract.ts";
import { filamentSizeHint } from "./size_hint.ts";
import type { Engine, EngineRunInput, EngineRunSummary, FrameSink } from "../contract.ts";
import { computeGeometry } from "./geometry.ts";
import { ringConstant } from "./biot_savart.ts";
import { heliumAt } from "./helium.ts";
import { collidingRingsPoints, kelvinWavePoints, type Loop, ringCloud, ringPoints } from "./initial.ts";
import { energy, EnergyWork, impulse, lineLength } from "./diagnostics.ts";
import { LoopsFileError, readLoopsFile } from "./loops_file.ts";
import { A0_DEFAULT_M, type FilamentParams, filamentParamsSchema, KAPPA_HE4 } from "./params.ts";
import { FilamentSimulation, type SimulationConfig } from "./simulation.ts";
import { upgradeFilamentParams } from "./upgrade.ts";
import { FILAMENT_STARTER } from "./starter.ts";
import { FILAMENT_REFINEMENT, filamentConservation } from "./credibility.ts";
import { SegmentTree } from "./tree.ts";
import type { NormalFlow } from "./velocity.ts";

const ENGINE_VERSION = "3.0.0";

/** The 3D vortex-filament engine. */
export const filamentEngine: Engine<FilamentParams> = {
  scales(params: FilamentParams) {
    const s = resolveSettings(params);
    return {
      coreRadius: s.coreRadius,
      circulation: s.kappa,
      ringConstant: ringConstant(params.velocity),
      units: params.units === "physical"
        ? { length: "m", time: "s", circulation: "m²/s" }
        : { length: "ℓ", time: "ℓ²/κ", circulation: "κ" },
    };
  },
  id: "vortex-filament-3d",
  version: ENGINE_VERSION,
  title:
    "3D vortex filaments (Schwarz model: Biot–Savart/tree or LIA, RK4, remeshing, Type II reconnection, " +
    "mutual friction)",
  capabilities: {
    dimension: 3,
    fields: ["loop", "marker"],
    objects: "filament-point",
    events: {
      reconnection: "two antiparallel lines closer than δ_r reconnected, shortening the line " +
        "(ids: the two points; data: x, y, z, separation, length_removed, loop_a_before, loop_b_before, " +
        "loop_a_after, loop_b_after; −1 = loop removed right after)",
      "loop-removal": "a loop was removed (ids: its markers, whose tracks end; data: loop, points, " +
        "length_removed, reason (0 = tiny: < 5 points or < 3δ; 1 = beyond removeBeyond), x, y, z centroid)",
      "marker-transfer":
        "a marker point had to be deleted by remeshing; its marker id moved to a neighbour " +
        "(ids: the marker id; data: jump distance, receiver_old_id)",
      "heater-absorption": "a point entered the heater (r < r_h) and was deleted (ids: the point; data: " +
        "length_removed, marker (1 if its track ends), loop)",
      "accuracy-warning": "the sampled error of the tree/FMM nonlocal sum exceeded numerics.accuracyCheck." +
        "tolerance between two frames (data: p99 = 99th percentile of |Δv|/v_rms, tolerance, frame)",
    },
    diagnostics: {
      line_length: "total line length L (length)",
      energy: "desingularised kinetic energy per unit superfluid density (κ²/8π)∮∮ds₁·ds₂/|s₁ − s₂| " +
        "(length⁵/time²; periodic box: up to an additive constant)",
      impulse_x: "impulse per unit superfluid density (κ/2)∮ s×ds, x component (length⁴/time)",
      impulse_y: "impulse (κ/2)∮ s×ds, y component (length⁴/time)",
      impulse_z: "impulse (κ/2)∮ s×ds, z component (length⁴/time)",
      loop_count: "number of loops",
      reconnections: "cumulative number of reconnections",
      velocity_error: "99th percentile of |Δv|/v_rms of the tree/FMM nonlocal sum against the exact sum at " +
        "sampled points since the previous frame (dimensionless; empty when not checked, e.g. direct sum)",
    },
    units: {
      length: "m (units: physical) or ℓ (units: dimensionless)",
      time: "s (physical) or ℓ²/κ (dimensionless)",
      circulation: "κ",
    },
  },
  paramsSchema: filamentParamsSchema,
  upgradeParams: upgradeFilamentParams,
  starter: FILAMENT_STARTER,
  refinement: FILAMENT_REFINEMENT,
  conservation: filamentConservation,
  sizeHint: filamentSizeHint,
  run(input, sink) {
    checkRunControls(input.controls, { usesTolerance: false });
    const init = input.params.initial;
    if (init.kind === "given" && init.file !== undefined) {
      return readLoopsFile(init.file).then(
        (loops) => runWithLoops(input, sink, loops),
        (e) => {
          if (e instanceof LoopsFileError) throw new EngineFailure("invalid-state", e.message, 0);
          throw e;
        },
      );
    }
    return runWithLoops(input, sink, null);
  },
};

/** Physical constants and derived settings of a parameter set. */
export interface ResolvedSettings {
  readonly kappa: number;
  readonly coreRadius: number;
  readonly alpha: number;
  readonly alphaPrime: number;
  readonly boxSize: number;
  readonly normal: NormalFlow;
  readonly heaterRadius: number;
}

/** Resolves units, friction and normal flow of validated parameters. */
export function resolveSettings(p: FilamentParams): ResolvedSettings {
  const physical = p.units === "physical";
  const kappa = physical ? (p.kappa ?? KAPPA_HE4) : 1;
  const coreRadius = p.coreRadius ?? A0_DEFAULT_M;
  let alpha = 0, alphaPrime = 0, ratio: number | undefined;
  if (p.friction.kind === "temperature") {
    const he = heliumAt(p.friction.temperature);
    alpha = he.alpha;
    alphaPrime = he.alphaPrime;
    ratio = he.normalToSuperRatio;
  } else if (p.friction.kind === "coefficients") {
    alpha = p.friction.alpha;
    alphaPrime = p.friction.alphaPrime;
  }
  let normal: NormalFlow = { kind: "rest" };
  let heaterRadius = 0;
  const h = p.heater;
  if (h !== undefined) {
    normal = {
      kind: "line-heater",
      strength: h.referenceVelocity * h.referenceRadius,
      normalToSuperRatio: h.normalToSuperRatio ?? ratio ?? 0,
    };
    heaterRadius = h.radius;
  } else if (p.normalVelocity.some((v) => v !== 0)) normal = { kind: "uniform", velocity: p.normalVelocity };
  return {
    kappa,
    coreRadius,
    alpha,
    alphaPrime,
    boxSize: p.domain.kind === "periodic" ? p.domain.size : 0,
    normal,
    heaterRadius,
  };
}

/** The simulation configuration of validated parameters and run controls. */
export function simulationConfig(
  p: FilamentParams,
  maxDistance: number,
  sampleInterval: number,
  threads = 1,
): SimulationConfig {
  const r = resolveSettings(p);
  const nm = p.numerics;
  return {
    velocity: {
      kappa: r.kappa,
      coreRadius: r.coreRadius,
      model: p.velocity,
      summation: nm.summation,
      treeThreshold: nm.treeThreshold,
      theta: nm.theta,
      leafSize: nm.leafSize,
      fmm: nm.fmm,
      threads,
      boxSize: r.boxSize,
      alpha: r.alpha,
      alphaPrime: r.alphaPrime,
      normal: r.normal,
    },
    resolution: p.resolution,
    minSpacing: nm.minSpacingFactor * p.resolution,
    reconnectionDistance: nm.reconnectionFactor * p.resolution,
    dtFactor: nm.dtFactor,
    remesh: true,
    reconnect: true,
    markerEvery: nm.markerEvery,
    heaterRadius: r.heaterRadius,
    removeBeyond: p.removeBeyond ?? Infinity,
    maxDistance,
    maxPoints: nm.maxPoints,
    minStep: 1e-12 * sampleInterval,
    integrator: nm.integrator,
    accuracyCheck: nm.accuracyCheck,
  };
}

/** Initial loops of the parameters (file loops passed in), with the ring-ball bookkeeping. */
export function initialLoops(
  p: FilamentParams,
  input: EngineRunInput<FilamentParams>,
  fileLoops: Loop[] | null,
): { loops: Loop[]; rejectedFraction: number; ballRadius: number | null; ballCentre: readonly number[] } {
  const init = p.initial;
  const d = 0.5 * (1 + p.numerics.minSpacingFactor) * p.resolution; // middle of the band [δ_min, δ]
  switch (init.kind) {
    case "ring":
      return {
        loops: [ringPoints(init.radius, init.centre, init.normal, d, 0)],
        rejectedFraction: 0,
        ballRadius: null,
        ballCentre: [],
      };
    case "ring-pair":
      return {
        loops: collidingRingsPoints(init.radius, init.separation, init.offset, init.angle, d),
        rejectedFraction: 0,
        ballRadius: null,
        ballCentre: [],
      };
    case "helix": {
      const L = p.domain.kind === "periodic" ? p.domain.size : 0;
      return {
        loops: [kelvinWavePoints(L, init.waves, init.amplitude, d)],
        rejectedFraction: 0,
        ballRadius: null,
        ballCentre: [],
      };
    }
    case "ring-ball": {
      const c = ringCloud(
        {
          count: init.count,
          targetLineDensity: init.targetLineDensity,
          radius: init.radius,
          cloudRadius: init.cloudRadius,
          centre: init.centre,
        },
        d,
        p.resolution,
        input.rng,
      );
      return {
        loops: c.loops,
        rejectedFraction: c.rejectedFraction,
        ballRadius: init.cloudRadius,
        ballCentre: init.centre,
      };
    }
    case "given":
      return { loops: fileLoops ?? init.loops ?? [], rejectedFraction: 0, ballRadius: null, ballCentre: [] };
  }
}

/** Runs one realisation with the given initial loops (file loops already read). */
function runWithLoops(
  input: EngineRunInput<FilamentParams>,
  sink: FrameSink,
  fileLoops: Loop[] | null,
): EngineRunSummary {
  const p = input.params;
  const controls = input.controls;
  const cfg = simulationConfig(p, controls.maxDistance, controls.sampleInterval, input.threads ?? 1);
  const init = initialLoops(p, input, fileLoops);
  const sim = new FilamentSimulation(cfg, init.loops, (e) => sink.event(e));
  try {
    return simulate(input, sink, sim, cfg, init);
  } finally {
    sim.field.close();
  }
}

/** The frame loop of one realisation (see `runWithLoops`). */
function simulate(
  input: EngineRunInput<FilamentParams>,
  sink: FrameSink,
  sim: FilamentSimulation,
  cfg: SimulationConfig,
  init: ReturnType<typeof initialLoops>,
): EngineRunSummary {
  const controls = input.controls;
  const L = cfg.velocity.boxSize;
  const kappa = cfg.velocity.kappa;

  // Frame buffers (grown by doubling).
  let cap = 0;
  let fx = new Float64Array(0), fy = new Float64Array(0), fz = new Float64Array(0);
  const tree = new SegmentTree();
  const ework = new EnergyWork();
  const diag = () => {
    const s = sim.state;
    computeGeometry(s.n, s.x, s.y, s.z, s.next, s.prev, L, sim.geo);
    const useTree = sim.field.usesTree(s.n) || (L > 0 && s.n > 1500);
    const e = s.n === 0 ? 0 : energy(s, sim.geo, {
      kappa,
      coreRadius: cfg.velocity.coreRadius,
      boxSize: L,
      tree: useTree ? tree : null,
      theta: 0.5 * cfg.velocity.theta, // energy: a per-frame diagnostic, so a tighter θ (error ∝ θ⁴)
      leafSize: cfg.velocity.leafSize,
    }, ework);
    const imp = impulse(s, sim.geo, kappa, L);
    return { length: lineLength(sim.geo.len, s.n), energy: e, impulse: imp };
  };
  let velocityError = NaN;
  const emit = (index: number, d: ReturnType<typeof diag>) => {
    const s = sim.state;
    if (sim.accuracy !== null) {
      velocityError = sim.accuracy.takeFrameP99();
      const tol = sim.accuracy.settings.tolerance;
      if (velocityError > tol) {
        sink.event({
          t: sim.t,
          kind: "accuracy-warning",
          ids: [],
          data: { p99: velocityError, tolerance: tol, frame: index },
        });
      }
    }
    if (s.n > cap) {
      cap = Math.max(64, 2 * s.n);
      fx = new Float64Array(cap);
      fy = new Float64Array(cap);
      fz = new Float64Array(cap);
    }
    for (let i = 0; i < s.n; i++) {
      fx[i] = s.x[i] + L * s.imx[i];
      fy[i] = s.y[i] + L * s.imy[i];
      fz[i] = s.z[i] + L * s.imz[i];
    }
    sink.frame({
      index,
      t: sim.t,
      n: s.n,
      id: s.id,
      x: fx,
      y: fy,
      z: fz,
      circulation: null,
      loop: s.loopOf,
      marker: s.marker,
      diagnostics: {
        line_length: d.length,
        energy: d.energy,
        impulse_x: d.impulse.x,
        impulse_y: d.impulse.y,
        impulse_z: d.impulse.z,
        loop_count: s.nLoops,
        reconnections: sim.reconnections,
        velocity_error: velocityError,
      },
    });
  };

  // Initial scalars (measured after the initial remesh).
  const s0 = sim.state;
  const d0 = diag();
  const stats = centroidStats(sim, L);
  let ballVolume: number;
  if (init.ballRadius !== null) ballVolume = 4 / 3 * Math.PI * init.ballRadius ** 3;
  else if (L > 0) ballVolume = L * L * L;
  else ballVolume = 4 / 3 * Math.PI * Math.max(stats.maxRadius, 1e-300) ** 3;
  const initialScalars = {
    initial_line_density: d0.length / ballVolume,
    initial_rms_radius: stats.rmsRadius,
    initial_loop_count: s0.nLoops,
    initial_points: s0.n,
    radius_rejected_fraction: init.rejectedFraction,
  };

  const dtSample = controls.sampleInterval;
  const frames = Math.floor((controls.duration / dtSample) * (1 + 1e-12));
  emit(0, d0);
  let dLast = d0;
  for (let k = 1; k <= frames; k++) {
    const tk = k * dtSample;
    while (sim.t < tk * (1 - 1e-12)) {
      input.stop?.check();
      sim.advance(tk - sim.t);
      if (tk - sim.t < 1e-12 * tk) sim.t = tk;
    }
    sim.t = tk;
    dLast = diag();
    emit(k, dLast);
  }

  const scalars: Record<string, number> = {
    ...initialScalars,
    steps: sim.steps,
    reconnections: sim.reconnections,
    loops_removed: sim.loopsRemoved,
    length_removed: sim.lengthRemoved,
    marker_transfers: sim.markerTransfers,
    final_line_length: dLast.length,
    final_points: sim.state.n,
    alpha: cfg.velocity.alpha,
    alpha_prime: cfg.velocity.alphaPrime,
  };
  if (sim.accuracy !== null && sim.accuracy.checks > 0) {
    const a = sim.accuracy.summary();
    scalars.velocity_error_p99 = a.p99;
    scalars.velocity_error_max = a.max;
    scalars.velocity_error_samples = a.samples;
  }
  const conservative = L === 0 && cfg.velocity.alpha === 0 && cfg.velocity.alphaPrime === 0 &&
    cfg.velocity.normal.kind === "rest";
  if (conservative) {
    const scale = d0.impulse.loopMagnitudeSum;
    if (scale > 0) {
      scalars["drift.impulse"] = Math.hypot(
        dLast.impulse.x - d0.impulse.x,
        dLast.impulse.y - d0.impulse.y,
        dLast.impulse.z - d0.impulse.z,
      ) / scale;
    }
    if (d0.energy !== 0) scalars["drift.energy"] = Math.abs(dLast.energy - d0.energy) / Math.abs(d0.energy);
  }
  return { scalars };
}

/** Length-weighted centroid statistics of the current state (unwrapped positions). */
function centroidStats(sim: FilamentSimulation, L: number): { rmsRadius: number; maxRadius: number } {
  const s = sim.state;
  const g = sim.geo;
  let w = 0, cx = 0, cy = 0, cz = 0;
  for (let i = 0; i < s.n; i++) {
    const l = 0.5 * (g.len[i] + g.len[s.prev[i]]);
    w += l;
    cx += l * (s.x[i] + L * s.imx[i]);
    cy += l * (s.y[i] + L * s.imy[i]);
    cz += l * (s.z[i] + L * s.imz[i]);
  }
  if (w === 0) return { rmsRadius: 0, maxRadius: 0 };
  cx /= w;
  cy /= w;
  cz /= w;
  let r2 = 0, rmax = 0;
  for (let i = 0; i < s.n; i++) {
    const l = 0.5 * (g.len[i] + g.len[s.prev[i]]);
    const dx = s.x[i] + L * s.imx[i] - cx, dy = s.y[i] + L * s.imy[i] - cy, dz = s.z[i] + L * s.imz[i] - cz;
    const q = dx * dx + dy * dy + dz * dz;
    r2 += l * q;
    if (q > rmax) rmax = q;
  }
  return { rmsRadius: Math.sqrt(r2 / w), maxRadius: Math.sqrt(rmax) };
}
