import type { EngineEvent } from "../contract.ts";
import { RandomStream } from "../random.ts";
import { createDipoleClassifier } from "./classify_2d.ts";
import type { Classification } from "./contract.ts";
import { evaporationObservable } from "./evaporation.ts";
import { Label } from "./labels.ts";
import {
  assertEquals,
  CAPS_2D,
  CAPS_3D,
  CONFIG,
  context,
  frame2d,
  frame3d,
  ring,
  type Vortex,
} from "./_testing.ts";

function cls(labels: number[], events: EngineEvent[], dim = 2): Classification {
  return { labels: Uint8Array.from(labels), centre: new Array(dim).fill(0), rmsRadius: 1, events };
}

const ev = (kind: string, ids: number[], data: Record<string, number> = {}): EngineEvent => ({
  t: 0,
  kind,
  ids,
  data,
});

Deno.test("evaporationObservable counts distinct evaporated vortices, recaptures and strays (2D)", () => {
  const f = frame2d(0, 0, [1, 2, 3, 4].map((id) => ({ id, x: id, y: 0, g: 1 })));
  const M = Label.Main, E = Label.Evaporated, S = Label.Stray;
  const acc = evaporationObservable.create(context(CAPS_2D));
  acc.push(f, cls([M, M, M, M], []));
  acc.push(f, cls([E, E, M, S], [ev("evaporation", [1, 2]), ev("stray", [4])]));
  acc.push(f, cls([M, M, M, S], [ev("recapture", [1]), ev("recapture", [2])]));
  // The same dipole evaporates again: not counted twice.
  acc.push(f, cls([E, E, M, S], [ev("evaporation", [1, 2])]));
  const r = acc.finish();
  assertEquals(r.series.evaporated_count.v, [0, 2, 2, 2]);
  assertEquals(r.series.recaptured_count.v, [0, 0, 2, 2]);
  assertEquals(r.series.stray_count.v, [0, 1, 1, 1]);
  assertEquals(r.scalars, { evaporated_final: 2, recaptured_final: 2 });
});

Deno.test("evaporationObservable counts loops by track in 3D", () => {
  const f = frame3d(0, 0, [ring(0, 0, [0, 0, 0], [0, 0, 1], 1, 8), ring(1, 100, [5, 0, 0], [0, 0, 1], 1, 8)]);
  const acc = evaporationObservable.create(context(CAPS_3D, CONFIG, 1e-3));
  const labels = [...new Array(8).fill(Label.Stray), ...new Array(8).fill(Label.Evaporated)];
  acc.push(f, cls(labels, [ev("evaporation", [100, 104], { track: 7 })], 3));
  const r = acc.finish();
  assertEquals(r.series.evaporated_count.v, [1]);
  assertEquals(r.series.stray_count.v, [1]);
});

Deno.test("evaporationObservable with the 2D classifier counts a planted dipole from frame K", () => {
  // Methods §7.4: planted dipole far from a cluster → labelled; both vortices counted.
  const rng = RandomStream.fromState([1, 2, 3, 4]);
  const base: Vortex[] = Array.from({ length: 200 }, (_, i) => {
    const r = 10 * Math.sqrt(rng.uniform()), th = 2 * Math.PI * rng.uniform();
    return { id: i, x: r * Math.cos(th), y: r * Math.sin(th), g: i % 2 === 0 ? 1 : -1 };
  });
  const d = 0.1, U = 1 / (2 * Math.PI * d); // κ/(2πd), docs/check-values.md §1.3
  const ctx = context(CAPS_2D);
  const classifier = createDipoleClassifier(ctx);
  const acc = evaporationObservable.create(ctx);
  for (let k = 0; k < 6; k++) {
    const s = 30 + U * k;
    const f = frame2d(k, k, [...base, { id: 500, x: s, y: d / 2, g: 1 }, {
      id: 501,
      x: s,
      y: -d / 2,
      g: -1,
    }]);
    acc.push(f, classifier.classify(f));
  }
  const r = acc.finish();
  assertEquals(r.series.evaporated_count.v, [0, 0, 0, 2, 2, 2]);
  assertEquals(r.scalars.evaporated_final, 2);
});
