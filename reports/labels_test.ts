import assert from "node:assert/strict";
import { pathWords, pointColour, pointNames, thresholdChange, valueWords } from "./labels.ts";
import { dimUnit, lengthScale, reportUnits, scalarInfo, timeScale } from "./quantities.ts";

Deno.test("pointNames: swept values in words, objects by their kind, duplicates numbered", () => {
  assert.equal(pathWords("initial.count"), "initial count");
  assert.equal(pathWords("friction.alphaPrime"), "friction alpha prime");
  assert.equal(valueWords({ kind: "temperature", temperature: 1.6 }), "temperature 1.6");
  assert.deepEqual(
    pointNames([
      { varied: { "initial.count": 100 }, label: "initial.count=100" },
      { varied: { friction: { kind: "none" } }, label: "friction={kind: none}" },
      { varied: {}, label: "base" },
      { varied: {}, label: "base" },
    ]),
    ["initial count = 100", "friction: none", "base (#2)", "base (#3)"],
  );
});

Deno.test("pointColour: the same colour for the same index of a study, on every page", () => {
  assert.equal(pointColour(0, 2), "#4c78a8");
  assert.equal(pointColour(1, 2), "#f58518");
  assert.equal(pointColour(1, 12), "#9ecae9", "tableau20 above ten points");
});

Deno.test("thresholdChange: readable threshold changes; the outward cosine as its angle", () => {
  // arccos 0.5 = 60°, arccos(−0.5) = 120°, arccos(0.866) = 30° (exact trigonometry).
  assert.equal(thresholdChange("outwardCosine*2", 0.5, -0.5), "outward angle 60° → 120°");
  assert.equal(thresholdChange("outwardCosine*0.5", 0.5, 0.866), "outward angle 60° → 30°");
  assert.equal(thresholdChange("radiusFactor*0.5", 3, 1.5), "escape radius factor k 3 → 1.5");
  assert.equal(thresholdChange("stickyFrames*2", null, null), "frames before a label changes K × 2");
});

Deno.test("quantities: SI prefixes for physical axes, none in κ units; scalars split into physics and diagnostics", () => {
  const si = reportUnits({ length: "m", time: "s", circulation: "m²/s", kappa: "9.9693e-8" });
  assert.equal(si.kappa, 9.9693e-8);
  assert.deepEqual(timeScale(si, 0.004), { factor: 1000, unit: "ms" });
  assert.deepEqual(lengthScale(si, 2.5e-5), { factor: 1e6, unit: "µm" });
  assert.deepEqual(lengthScale(si, 3), { factor: 1, unit: "m" });
  const k = reportUnits({ length: "ℓ", time: "ℓ²/κ", circulation: "κ" });
  assert.equal(k.kappa, 1);
  assert.deepEqual(timeScale(k, 0.004), { factor: 1, unit: "ℓ²/κ" });
  assert.equal(reportUnits({ length: "m", time: "s" }).kappa, undefined, "older database: κ unknown");
  assert.equal(scalarInfo("rejected_steps").kind, "diagnostic");
  assert.equal(scalarInfo("drift.hamiltonian").kind, "diagnostic");
  assert.equal(scalarInfo("annihilations").kind, "physics");
  assert.equal(dimUnit(scalarInfo("initial_density").dim, si), "m⁻²");
  assert.equal(dimUnit(scalarInfo("msd_final").dim, k), "ℓ²");
  assert.equal(dimUnit(scalarInfo("some_new_scalar").dim, k), "not declared");
});
