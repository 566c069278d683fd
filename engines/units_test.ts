import { assertEquals } from "../test/_assert.ts";
import { diffusionHeading, diffusionUnit, metresIn, squared, timeInKappaUnits } from "./units.ts";

Deno.test("timeInKappaUnits: a length squared over κ is a κ-unit time; seconds are not", () => {
  for (const t of ["ℓ²/κ", "µm²/κ", "(patch radius)²/κ", "(2.5 µm)² / κ"]) {
    assertEquals(timeInKappaUnits(t), true, t);
  }
  for (const t of ["s", "ms", "0.5 ms", "study time unit", "κ"]) assertEquals(timeInKappaUnits(t), false, t);
});

Deno.test("diffusionUnit: D/κ in κ units, D in length²/time otherwise", () => {
  assertEquals(diffusionUnit({ length: "ℓ", time: "ℓ²/κ" }).header, "D/κ");
  assertEquals(diffusionUnit(undefined).header, "D/κ");
  assertEquals(diffusionUnit({ length: "m", time: "s" }), { symbol: "D", unit: "m²/s", header: "D (m²/s)" });
  assertEquals(diffusionUnit({ length: "2.5 µm", time: "0.5 ms" }).unit, "(2.5 µm)²/(0.5 ms)");
});

Deno.test("squared and metresIn: unit text helpers", () => {
  assertEquals(squared("µm"), "µm²");
  assertEquals(squared("patch radius"), "(patch radius)²");
  assertEquals(metresIn("µm"), 1e-6);
  assertEquals(metresIn("um"), 1e-6);
  assertEquals(metresIn("2.5 nm"), 2.5e-9);
  assertEquals(metresIn("patch radius"), undefined);
  assertEquals(metresIn("ℓ"), undefined);
});

Deno.test("diffusionHeading: κ-unit studies read D/κ, physical ones D with its unit (the 3D demo is in m and s)", () => {
  assertEquals(diffusionHeading({ length: "ℓ", time: "ℓ²/κ" }, "D", "MSD"), "D/κ (MSD)");
  assertEquals(diffusionHeading({ length: "m", time: "s" }, "D_R", "R_rms"), "D_R (R_rms, m²/s)");
  assertEquals(diffusionHeading(undefined, "D", "Vinen"), "D/κ (Vinen)");
});
