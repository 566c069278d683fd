/**
 * Parameters of the filament engine in the spellings of the previous release, rewritten to the current ones
 * with one deprecation note per change (accepted for one release; `spindrift check` and `run` print the notes):
 *
 * | earlier spelling                                      | current spelling                                 |
 * | ----------------------------------------------------- | ------------------------------------------------ |
 * | `initial.kind: colliding-rings`                       | `initial.kind: ring-pair`                        |
 * | `initial.kind: kelvin-wave`                           | `initial.kind: helix`                            |
 * | `initial.kind: ring-cloud`                            | `initial.kind: ring-ball`                        |
 * | `initial.kind: loops`                                 | `initial.kind: given`                            |
 * | `normalFluid: { kind: rest }`                         | nothing (the normal fluid is at rest by default) |
 * | `normalFluid: { kind: uniform, velocity: v }`         | `normalVelocity: v`                              |
 * | `normalFluid: { kind: line-heater, heaterRadius, … }` | `heater: { radius, … }`                          |
 *
 * @example
 * ```ts
 * const up = upgradeFilamentParams({ initial: { kind: "ring-cloud", count: 4 } });
 * up.params; // { initial: { kind: "ring-ball", count: 4 } }
 * up.notes[0].path; // ["initial", "kind"]
 * ```
 */
import type { ParamsUpgrade } from "../contract.ts";

const OLD_KINDS: Readonly<Record<string, string>> = {
  "colliding-rings": "ring-pair",
  "kelvin-wave": "helix",
  "ring-cloud": "ring-ball",
  "loops": "given",
};

const UNTIL = "accepted until the next release";

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

/** Rewrites earlier spellings (see the module comment); anything else is returned as it is. */
export function upgradeFilamentParams(params: Readonly<Record<string, unknown>>): ParamsUpgrade {
  const out: Record<string, unknown> = { ...params };
  const notes: { path: (string | number)[]; message: string }[] = [];
  const init = params.initial;
  if (isRecord(init) && typeof init.kind === "string" && init.kind in OLD_KINDS) {
    const now = OLD_KINDS[init.kind];
    out.initial = { ...init, kind: now };
    notes.push({
      path: ["initial", "kind"],
      message: `"${init.kind}" is the earlier name of "${now}" (${UNTIL}): write kind: ${now}`,
    });
  }
  const nf = params.normalFluid;
  if (isRecord(nf) && !("normalVelocity" in params) && !("heater" in params)) {
    const { kind, ...rest } = nf;
    const gone = `normalFluid is replaced by normalVelocity and heater (${UNTIL})`;
    if (kind === "rest" && Object.keys(rest).length === 0) {
      delete out.normalFluid;
      notes.push({
        path: ["normalFluid"],
        message: `${gone}: the normal fluid is at rest by default; remove it`,
      });
    } else if (kind === "uniform" && Object.keys(rest).every((k) => k === "velocity")) {
      delete out.normalFluid;
      out.normalVelocity = rest.velocity;
      notes.push({ path: ["normalFluid"], message: `${gone}: write normalVelocity: [vx, vy, vz]` });
    } else if (kind === "line-heater") {
      const { heaterRadius, ...others } = rest;
      delete out.normalFluid;
      out.heater = heaterRadius === undefined ? others : { radius: heaterRadius, ...others };
      notes.push({
        path: ["normalFluid"],
        message:
          `${gone}: write heater: { radius, referenceRadius, referenceVelocity } (radius was heaterRadius)`,
      });
    }
  }
  return { params: out, notes };
}
