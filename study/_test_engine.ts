/**
 * A small engine for the study-file tests, independent of the real engines' evolving parameters. Its schema
 * mixes the forms the loader must handle: a plain `z.object` (which would silently drop unknown keys), a
 * discriminated union, defaults, and a cross-field refinement with a path.
 */
import { z } from "zod";
import type { Engine } from "../engines/contract.ts";

const toyParamsSchema = z.object({
  count: z.int().min(1).describe("Number of objects (dimensionless)."),
  polarity: z.number().min(-1).max(1).default(0).describe("Net polarity (dimensionless)."),
  shape: z.discriminatedUnion("kind", [
    z.strictObject({ kind: z.literal("disk"), radius: z.number().positive().describe("Radius, in ℓ.") }),
    z.strictObject({ kind: z.literal("square"), side: z.number().positive().describe("Side, in ℓ.") }),
  ]).default({ kind: "disk", radius: 1 }),
  friction: z.object({
    alpha: z.number().nonnegative().default(0),
    alphaPrime: z.number().default(0),
  }).default({ alpha: 0, alphaPrime: 0 }),
  label: z.string().default("toy"),
}).superRefine((p, ctx) => {
  if (p.polarity === 0 && p.count % 2 !== 0) {
    ctx.addIssue({ code: "custom", path: ["count"], message: `count ${p.count} is odd but polarity is 0` });
  }
});

/** Parameters of the toy engine after defaults. */
export type ToyParams = z.output<typeof toyParamsSchema>;

function toyEngine(version: string): Engine<ToyParams> {
  return {
    id: "toy-engine",
    version,
    title: "Toy engine for study-file tests",
    capabilities: {
      dimension: 2,
      fields: ["circulation"],
      objects: "vortex",
      events: {},
      diagnostics: {},
      units: { length: "ℓ", time: "ℓ²/κ", circulation: "κ" },
    },
    paramsSchema: toyParamsSchema,
    run() {
      throw new Error("the toy engine only exists for study-file tests");
    },
  };
}

/** The toy engine, version 1.0.0. */
export const TOY_ENGINE: Engine<ToyParams> = toyEngine("1.0.0");
/** The same engine with another version (for hash tests). */
export const TOY_ENGINE_V2: Engine<ToyParams> = toyEngine("2.0.0");

/** A valid toy study; `extra` lines are appended. */
export function toyStudy(extra = ""): string {
  return `name: toy
description: A toy study.
engine: toy-engine
parameters:
  count: 8
  shape: { kind: disk, radius: 2 }
seed: 42
run:
  duration: 10
  sampleInterval: 0.5
${extra}`;
}
