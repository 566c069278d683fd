/** Earlier spellings of renamed engine parameters: accepted with a warning at the old spelling, then normalized exactly as the new spelling. */
import { deepStrictEqual, equal, match, ok } from "node:assert/strict";
import { parseStudyText } from "./load.ts";
import { normalizeStudy } from "./normalize.ts";
import { formatProblems } from "./problems.ts";

const study = (parameters: string, sweep = "") =>
  `name: renamed
engine: vortex-filament-3d
parameters:
  units: dimensionless
  coreRadius: 1.0e-4
  resolution: 0.1
${parameters}
${sweep}realisations: 2
seed: 1
run: { duration: 0.01, sampleInterval: 0.01 }
`;

const OLD = study(`  initial: { kind: ring-cloud, count: 3, radius: 0.5, cloudRadius: 2 }
  normalFluid:
    kind: uniform
    velocity: [0, 0, 0.5]
  friction: { kind: coefficients, alpha: 0.1, alphaPrime: 0 }`);
const NEW = study(`  initial: { kind: ring-ball, count: 3, radius: 0.5, cloudRadius: 2 }
  normalVelocity: [0, 0, 0.5]
  friction: { kind: coefficients, alpha: 0.1, alphaPrime: 0 }`);

Deno.test("parseStudyText: earlier filament spellings load, warn at the old spelling, and hash like the new ones", () => {
  const old = parseStudyText(OLD, "old.yaml");
  const now = parseStudyText(NEW, "new.yaml");
  ok(old.ok && now.ok, JSON.stringify(old));
  equal(now.warnings.length, 0);
  deepStrictEqual(
    formatProblems(old.warnings).split("\n"),
    [
      'old.yaml:7:20  parameters.initial.kind: got ring-cloud; "ring-cloud" is the earlier name of "ring-ball" ' +
      "(accepted until the next release): write kind: ring-ball",
      "old.yaml:8:3  parameters.normalFluid: normalFluid is replaced by normalVelocity and heater (accepted " +
      "until the next release): write normalVelocity: [vx, vy, vz]",
    ],
  );
  const a = normalizeStudy(old.study, { text: OLD, sourcePath: "old.yaml" });
  const b = normalizeStudy(now.study, { text: NEW, sourcePath: "new.yaml" });
  equal(a.hash, b.hash);
  deepStrictEqual(a.points, b.points);
});

Deno.test("parseStudyText: an earlier spelling inside a swept value is rewritten there, with a warning", () => {
  const text = study(
    "  initial: { kind: ring, radius: 1 }",
    "sweep:\n  grid:\n    initial:\n      - { kind: ring, radius: 1 }\n" +
      "      - { kind: colliding-rings, radius: 1, separation: 2 }\n",
  );
  const r = parseStudyText(text, "s.yaml");
  ok(r.ok, JSON.stringify(r));
  equal(r.warnings.length, 1);
  match(
    formatProblems(r.warnings),
    /^s\.yaml:12:9  sweep\.grid\.initial\[1\]: .*"colliding-rings" is the earlier name/,
  );
  const s = normalizeStudy(r.study, { text, sourcePath: "s.yaml" });
  equal((s.points[1].params as { initial: { kind: string } }).initial.kind, "ring-pair");
});

Deno.test("parseStudyText: a swept section whose rename changes its path is refused with what to do", () => {
  const text = study(
    "  initial: { kind: ring, radius: 1 }",
    "sweep:\n  grid:\n    normalFluid: [{ kind: rest }, { kind: uniform, velocity: [0, 0, 1] }]\n",
  );
  const r = parseStudyText(text, "s.yaml");
  ok(!r.ok);
  match(
    formatProblems(r.problems),
    /sweep\.grid\.normalFluid: uses an earlier spelling that cannot be swept/,
  );
});
