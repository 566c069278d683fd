/** The first study `spindrift new point-vortex-2d` writes (see `EngineStarter`). */
import type { EngineStarter } from "../contract.ts";

export const POINT_VORTEX_STARTER: EngineStarter = {
  about:
    "A neutral cloud of point vortices in the unbounded plane, at two vortex counts. Lengths are in a unit " +
    "ℓ of your choosing (name it in lengthUnit), circulations in κ, times in ℓ²/κ. Change the cloud, the " +
    "friction and the counts to your system, then the duration: the analysis needs a diffusive window, " +
    "long after the first dipoles have left.",
  question:
    "How fast does a neutral cloud of quantized vortices spread (D/κ), and does it depend on the vortex " +
    "count?",
  parameters: `lengthUnit: "cloud radius" # name of the length unit ℓ (a label in reports; numerics use κ = 1)
domain: { kind: unbounded } # or { kind: disk, radius: R } (a wall) or { kind: periodic, side: L }
initial:
  kind: random-cloud # or explicit: a list of vortices { x, y, circulation }
  count: 64 # number of vortices N
  polarity: 0 # (N₊ − N₋)/N: 0 is a neutral cloud
  shape: uniform-disk # or gaussian (then radius is the standard deviation)
  radius: 1.0 # cloud radius, ℓ
  # minSeparation: 0.02  # hard-core distance, ℓ (default 2 × annihilationDistance)
annihilationDistance: 0.01 # opposite-sign vortices closer than this annihilate, ℓ (0 = never)
friction:
  alpha: 0.0 # mutual friction α (dimensionless; 0 = no friction, e.g. T = 0)
  alphaPrime: 0.0 # mutual friction α′ (dimensionless)
  # normalVelocity: [0, 0]  # uniform normal-fluid velocity, κ/ℓ
`,
  sweep: `grid: # every combination of the listed values is one parameter point
  initial.count: [48, 64]
`,
  realisations: 20,
  run: { duration: 4, sampleInterval: 0.1, unit: "ℓ²/κ" },
};
