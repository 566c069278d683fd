/** The first study `spindrift new gross-pitaevskii-2d` writes (see `EngineStarter`). */
import type { EngineStarter } from "../contract.ts";

export const GP_STARTER: EngineStarter = {
  about:
    "A neutral cloud of quantized vortices imprinted into a 2D condensate in a flat-bottomed disk trap, with " +
    "and without a little damping. Lengths are in healing lengths ξ, times in ξ²/κ (1 ξ/c = 2π ξ²/κ). Change " +
    "the trap, the grid (its half-width must leave room beyond the wall) and the cloud to your system, then " +
    "the duration: the analysis needs a diffusive window long after the first pairs have annihilated.",
  question:
    "How fast does a vortex cloud in a trapped condensate lose vortices (pairs annihilating by sound " +
    "emission, the wall), and does what remains spread diffusively (D/κ)? Does damping change it?",
  parameters: `grid:
  points: 128 # grid points per side (a power of two, 16 to 1024)
  spacing: 0.5 # grid spacing, ξ (0.5 resolves a core well); half-width 32 ξ
trap:
  kind: disk # or { kind: box, side: S } or { kind: periodic } (no trap)
  radius: 20 # wall position, ξ (the grid needs ~10 ξ of room beyond it)
  wall: { profile: tanh, height: 10, width: 1 } # wall height in μ, width in ξ
initial:
  kind: random-cloud # or explicit: a list of vortices { x, y, circulation }
  count: 8 # number of vortices N
  polarity: 0 # (N₊ − N₋)/N: 0 is a neutral cloud
  radius: 10 # cloud radius, ξ
  minSeparation: 4 # hard-core distance between vortices, ξ
  wallClearance: 3 # keep vortices this far inside the wall, ξ
damping: 0 # phenomenological damping γ (dimensionless; ≈ mutual friction α)
noise: 0 # white noise after relaxation, relative to the local amplitude
timeStep: 0.3 # largest split-step time step, ξ²/κ
`,
  sweep: `grid: # every combination of the listed values is one parameter point
  damping: [0, 0.01]
`,
  realisations: 20,
  run: { duration: 120, sampleInterval: 12, unit: "ξ²/κ" },
};
