/**
 * A synthetic engine with a known answer for the sequential-sampling tests: each realisation reports one
 * scalar `value` drawn from a normal law N(mean, sd²) (or an exponential law of that mean, sd = mean, to show
 * the procedure's caveat on skewed values) with its own seeded stream, and one frame with one object. Not
 * registered: tests call `run` directly.
 */
import { z } from "zod";
import type { Engine } from "../engines/contract.ts";

const schema = z.strictObject({
  mean: z.number().describe("Mean of the reported value (dimensionless)."),
  sd: z.number().positive().describe("Standard deviation of the reported value (dimensionless)."),
  law: z.enum(["normal", "exponential"]).default("normal").describe("Distribution of the value."),
});

export type SyntheticParams = z.output<typeof schema>;

export const SYNTHETIC_ENGINE: Engine<SyntheticParams> = {
  id: "synthetic-scalar",
  version: "1.0.0",
  title: "Synthetic engine: one scalar of known mean and variance per realisation",
  capabilities: {
    dimension: 2,
    fields: [],
    objects: "vortex",
    events: {},
    diagnostics: {},
    units: { length: "ℓ", time: "ℓ²/κ", circulation: "κ" },
  },
  paramsSchema: schema,
  run(input, sink) {
    const p = input.params;
    const value = p.law === "normal"
      ? p.mean + p.sd * input.rng.normal()
      : -p.mean * Math.log(input.rng.uniformPositive());
    const one = (v: number) => Float64Array.of(v);
    sink.frame({
      index: 0,
      t: 0,
      n: 1,
      id: Int32Array.of(0),
      x: one(0),
      y: one(0),
      z: null,
      circulation: null,
      loop: null,
      marker: null,
      diagnostics: {},
    });
    return { scalars: { value } };
  },
};
