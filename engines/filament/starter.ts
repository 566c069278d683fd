/** The first study `spindrift new vortex-filament-3d` writes (see `EngineStarter`). */
import type { EngineStarter } from "../contract.ts";

export const FILAMENT_STARTER: EngineStarter = {
  about:
    "A ball of small vortex rings in still superfluid ⁴He, in SI units (metres, seconds, kelvin; κ of ⁴He), " +
    "at 0 K and at 1.6 K. It is small so that a first run takes minutes: make the ball larger and the run " +
    "longer before reading D from it (the report says when there is no diffusive window).",
  question:
    "How many rings escape from a ball of small vortex rings in ⁴He, and how fast does the remaining " +
    "tangle spread, at 0 K and at 1.6 K?",
  parameters:
    `units: physical # metres, seconds, kelvin, κ of ⁴He; or dimensionless (κ = 1, lengths in ℓ, times in ℓ²/κ)
resolution: 2.5e-6 # point spacing δ along the lines, m (≤ 1/10 of the line spacing, ≥ 10 points per ring)
initial:
  kind: ring-ball # or ring, ring-pair, helix (periodic box), given (loops listed or read from a file)
  count: 8 # number of rings (or targetLineDensity, m⁻²)
  radius: { mean: 1.0e-5, sd: 2.0e-6 } # ring radius, m (or one fixed radius)
  cloudRadius: 2.5e-5 # ring centres uniform in a ball of this radius, m
friction: { kind: none } # T = 0; or { kind: temperature, temperature: 1.6 } (K), or coefficients α, α′
# normalVelocity: [0, 0, 0]  # uniform normal-fluid velocity, m/s (acts through friction)
# heater: { radius: …, referenceRadius: …, referenceVelocity: … }  # a heated wire on the z axis
# domain: { kind: periodic, size: 1.0e-4 }  # default: unbounded
`,
  sweep: `grid: # every listed value is one parameter point
  friction: [{ kind: none }, { kind: temperature, temperature: 1.6 }]
`,
  realisations: 20,
  run: { duration: 2.0e-3, sampleInterval: 1.0e-4, unit: "s" },
};
