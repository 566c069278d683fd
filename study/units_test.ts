import { assert, assertEquals } from "../test/_assert.ts";
import { normalizeText } from "../test/_study.ts";
import { describeUnits } from "./units.ts";

const pointVortex = (lengthUnit: string) => `
name: u
engine: point-vortex-2d
parameters:
  lengthUnit: "${lengthUnit}"
  initial: { kind: random-cloud, count: 8, radius: 1.0 }
seed: 1
run: { duration: 1, sampleInterval: 0.1 }
`;

Deno.test("describeUnits: a metric lengthUnit is told that its time unit is µm²/κ, with its value in seconds", () => {
  const u = describeUnits(normalizeText(pointVortex("µm")));
  assertEquals(u.time, "µm²/κ");
  assertEquals(u.diffusion, "D/κ");
  assert(u.lines[0].includes("times in µm²/κ") && u.lines[0].includes("D comes out as D/κ"), u.lines[0]);
  // (1e-6 m)² / 9.9693e-8 m²/s = 1.003e-5 s (κ of ⁴He: h/m₄, CODATA 2018).
  assert(u.lines[1].includes("µm²/κ is not a second") && u.lines[1].includes("1.003e-5 s"), u.lines[1]);
  const plain = describeUnits(normalizeText(pointVortex("patch radius")));
  assertEquals(plain.time, "(patch radius)²/κ");
  assert(plain.lines[1].startsWith("to convert: "), plain.lines[1]);
});

Deno.test("describeUnits: physical filament and imported studies give D in their length²/time", () => {
  const filament = describeUnits(normalizeText(`
name: f
engine: vortex-filament-3d
parameters:
  resolution: 2.5e-6
  initial: { kind: ring, radius: 1.0e-5 }
seed: 1
run: { duration: 1.0e-4, sampleInterval: 1.0e-4 }
`));
  assertEquals([filament.length, filament.time, filament.diffusion], ["m", "s", "D (m²/s)"]);
  assertEquals(filament.kappa, 9.9693e-8);
  assert(filament.lines[0].includes("κ = 9.9693e-8 m²/s: D comes out in m²/s"), filament.lines[0]);
  const imported = describeUnits(normalizeText(`
name: i
engine: imported-tracks-2d
parameters:
  source: { files: "r{index}.csv" }
  units: { length: um, time: { value: 0.5, unit: ms } }
run: { duration: 1, sampleInterval: 0.1 }
`));
  assertEquals([imported.length, imported.time, imported.diffusion], ["µm", "0.5 ms", "D (µm²/(0.5 ms))"]);
  const bare = describeUnits(normalizeText(`
name: b
engine: imported-tracks-2d
parameters:
  source: { files: "r{index}.csv" }
run: { duration: 1, sampleInterval: 0.1 }
`));
  assertEquals([bare.length, bare.time, bare.diffusion], ["ℓ", "ℓ²/κ", "D/κ"]);
});
