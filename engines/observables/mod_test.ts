import {
  applicableObservables,
  createClassifier,
  DEFAULT_CLASSIFICATION,
  observableIds,
  OBSERVABLES,
} from "./mod.ts";
import {
  assert,
  assertEquals,
  assertThrows,
  CAPS_2D,
  CAPS_3D,
  CONFIG,
  context,
  frame2d,
  frame3d,
  ring,
} from "./_testing.ts";

Deno.test("DEFAULT_CLASSIFICATION holds the thresholds of docs/methods.md §8", () => {
  // docs/methods.md §8: f = 0.3, k = 2, K = 3 frames, outward cosine 0.5; §4.1: speed within 25 %.
  assertEquals(DEFAULT_CLASSIFICATION, {
    separationFactor: 0.3,
    radiusFactor: 2,
    stickyFrames: 3,
    outwardCosine: 0.5,
    speedTolerance: 0.25,
  });
  assertEquals(observableIds(), ["cluster", "evaporation", "msd"]);
  assertEquals(OBSERVABLES.map((o) => o.id), ["cluster", "evaporation", "msd"]);
});

Deno.test("applicableObservables keeps known observables whose needs the engine meets", () => {
  const all = applicableObservables(["msd", "cluster", "msd", "evaporation"], CAPS_2D);
  assertEquals(all.use.map((o) => o.id), ["msd", "cluster", "evaporation"]);
  assertEquals(all.skipped, []);
  const noMarkers = applicableObservables(["cluster", "msd", "vorticity"], { ...CAPS_3D, fields: ["loop"] });
  assertEquals(noMarkers.use.map((o) => o.id), ["cluster"]);
  assertEquals(noMarkers.skipped, [
    { id: "msd", reason: "needs frame field 'marker', which the engine's filament points do not carry" },
    { id: "vorticity", reason: "unknown observable 'vorticity' (known: cluster, evaporation, msd)" },
  ]);
});

Deno.test("createClassifier picks the classifier from the capabilities", () => {
  const planar = createClassifier(context(CAPS_2D)).classify(frame2d(0, 0, [{ id: 1, x: 1, y: 2, g: 1 }]));
  assertEquals(planar.centre, [1, 2]);
  const loops = createClassifier(context(CAPS_3D, CONFIG, 1e-3)).classify(
    frame3d(0, 0, [ring(0, 0, [1, 2, 3], [0, 0, 1], 1, 16)]),
  );
  assertEquals(loops.centre.length, 3);
  assert(Math.abs(loops.centre[2] - 3) < 1e-14);
  assertThrows(() => createClassifier(context(CAPS_3D, CONFIG)), RangeError, "core radius");
  assertThrows(
    () => createClassifier(context({ ...CAPS_2D, dimension: 3 })),
    RangeError,
    "no classifier for point objects",
  );
  assertThrows(
    () => createClassifier(context(CAPS_2D, { ...CONFIG, outwardCosine: 2 })),
    RangeError,
    "outwardCosine must be a number in [-1, 1)",
  );
});
