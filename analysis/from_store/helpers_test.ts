/** Unit tests of the analysis helpers: common profile bins, velocity at probes, varied thresholds. */
import { assert, assertClose, assertEquals, assertThrows } from "../../test/_assert.ts";
import { commonProfiles } from "./profiles.ts";
import { domainOf, velocityFieldFor } from "./engines.ts";
import { variedThreshold } from "../analyse.ts";

/** Bin-average of ρ(r) = e^{−r²} over annuli (d = 2) of width w: exact, ∫ e^{−r²} 2πr dr = π(e^{−a²} − e^{−b²}). */
function gaussBins2d(w: number, bins: number): Float64Array {
  return Float64Array.from(
    { length: bins },
    (_, k) =>
      (Math.exp(-((k * w) ** 2)) - Math.exp(-(((k + 1) * w) ** 2))) / (((k + 1) * w) ** 2 - (k * w) ** 2),
  );
}

// Content conservation of piecewise-constant rebinning: ∫ρ dμ over [0, R] is unchanged (exact arithmetic; common
// practice, no source). Gaussian content π(1 − e^{−R²}): elementary integral.
Deno.test("commonProfiles: rebinning conserves content and reproduces bin averages of a Gaussian profile", () => {
  const a = gaussBins2d(0.1, 30);
  const b = gaussBins2d(0.14, 25);
  const toFrames = (p: Float64Array) => Array.from(p, (v) => [v, 2 * v]); // two frames, the second doubled
  const res = commonProfiles(2, [{ binWidth: 0.1, values: toFrames(a) }, {
    binWidth: 0.14,
    values: toFrames(b),
  }], [
    0,
    1,
  ]);
  assertClose(res.binWidth, 0.12, 1e-12, "common width = mean width");
  assertEquals(res.bins, Math.floor(3.0 / 0.12 + 1e-9)); // min reach 3.0 (= 30·0.1 and 25·0.14 = 3.5)
  const K = res.bins, h = res.binWidth;
  const R = K * h;
  // Piecewise-constant content of a source profile (width w) within radius R.
  const sourceContent = (p: Float64Array, w: number) => {
    let c = 0;
    for (let k = 0; k < p.length && k * w < R; k++) {
      c += p[k] * (Math.min(R, (k + 1) * w) ** 2 - (k * w) ** 2);
    }
    return c;
  };
  const expected = [sourceContent(a, 0.1), sourceContent(b, 0.14)];
  // Source a ends exactly at R = 3, so its content is the Gaussian's: 1 − e^{−9} (units of π).
  assertClose(expected[0], 1 - Math.exp(-R * R), 1e-12, "source content within R");
  res.profiles.forEach((prof, i) => {
    let content = 0;
    for (let k = 0; k < K; k++) content += prof[k] * (((k + 1) * h) ** 2 - (k * h) ** 2);
    assertClose(content, expected[i], 1e-12, `content within R of realisation ${i} (units of π)`);
    for (let k = 0; k < K; k++) assertClose(prof[K + k], 2 * prof[k], 1e-14, `frame 1 bin ${k}`);
  });
  // Where common bins coincide with source bins (h = w), the values are copied exactly.
  const same = commonProfiles(2, [{ binWidth: 0.1, values: toFrames(a) }], [0]);
  for (let k = 0; k < same.bins; k++) assertClose(same.profiles[0][k], a[k], 1e-13, `bin ${k}`);
  assertThrows(
    () => commonProfiles(2, [{ binWidth: 1, values: [[1]] }], [0]),
    RangeError,
    "common profile bin",
  );
});

// Point-vortex velocity: u = Γ/(2πr) azimuthal; Saffman, Vortex Dynamics (1992) §7.1. In a disk a vortex at the
// centre has its image at infinity, so the field is the same (Milne-Thomson 1968 §6.21, circle theorem).
Deno.test("velocityFieldFor: point-vortex probes feel Γ/(2πr) azimuthal (unbounded and disk centre)", () => {
  for (const domain of [{ kind: "unbounded" }, { kind: "disk", radius: 10 }]) {
    const provider = velocityFieldFor("point-vortex-2d", { domain });
    assert(provider.field !== null, provider.reason ?? "");
    const field = provider.field!(1, [0], [0], [2]);
    const px = Float64Array.of(1, 0, -3), py = Float64Array.of(0, 2, 4);
    const u = new Float64Array(3), v = new Float64Array(3);
    field(3, px, py, null, u, v, null);
    for (let i = 0; i < 3; i++) {
      const r2 = px[i] * px[i] + py[i] * py[i];
      assertClose(u[i], (-2 * py[i]) / (2 * Math.PI * r2), 1e-12, `u at probe ${i} (${domain.kind})`, 1e-15);
      assertClose(v[i], (2 * px[i]) / (2 * Math.PI * r2), 1e-12, `v at probe ${i} (${domain.kind})`, 1e-15);
    }
  }
  const none = velocityFieldFor("imported-tracks-2d", {});
  assertEquals(none.field, null);
  assert(none.reason!.includes("imported-tracks-2d"));
});

// Domain sizes: diameter 2R, area πR²; periodic side L, area L² (geometry).
Deno.test("domainOf: disk and periodic sizes, unbounded and unknown engines have none", () => {
  assertEquals(domainOf("point-vortex-2d", { domain: { kind: "disk", radius: 3 } }), {
    kind: "disk",
    size: 6,
    area: 9 * Math.PI,
  });
  assertEquals(domainOf("point-vortex-2d", { domain: { kind: "periodic", side: 4 } }).area, 16);
  assertEquals(domainOf("point-vortex-2d", { domain: { kind: "unbounded" } }).size, null);
  assertEquals(domainOf("filament-3d", {}).kind, "unknown");
  const grid = { points: 128, spacing: 0.5 };
  assertEquals(domainOf("gross-pitaevskii-2d", { grid, trap: { kind: "box", side: 40 } }).area, 1600);
  assertEquals(domainOf("gross-pitaevskii-2d", { grid, trap: { kind: "disk", radius: 3 } }).size, 6);
  assertEquals(domainOf("gross-pitaevskii-2d", { grid, trap: { kind: "periodic" } }).size, 64);
});

// Halving/doubling rules of the sensitivity table (docs/methods.md §4: each threshold ×0.5 and ×2); the cosine is varied
// through its angle: cos(30°) = √3/2, cos(120°) = −1/2 (elementary trigonometry).
Deno.test("variedThreshold: factors, integer rounding of stickyFrames, outwardCosine through its angle", () => {
  const base = {
    separationFactor: 0.3,
    radiusFactor: 2,
    stickyFrames: 3,
    outwardCosine: 0.5,
    speedTolerance: 0.25,
  };
  assertEquals(variedThreshold(base, "separationFactor", 2).separationFactor, 0.6);
  assertEquals(variedThreshold(base, "radiusFactor", 0.5).radiusFactor, 1);
  assertEquals(variedThreshold(base, "stickyFrames", 0.5).stickyFrames, 2); // round(1.5) = 2
  assertEquals(variedThreshold(base, "stickyFrames", 2).stickyFrames, 6);
  assertClose(variedThreshold(base, "outwardCosine", 0.5).outwardCosine, Math.sqrt(3) / 2, 1e-14, "cos 30°");
  assertClose(variedThreshold(base, "outwardCosine", 2).outwardCosine, -0.5, 1e-14, "cos 120°");
  assertEquals(variedThreshold(base, "speedTolerance", 2), { ...base, speedTolerance: 0.5 });
});
