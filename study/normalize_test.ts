import { deepStrictEqual, equal, notEqual, ok, throws } from "node:assert/strict";
import { parseStudyText } from "./load.ts";
import { type NormalizedStudy, normalizeStudy } from "./normalize.ts";
import { contentHash, sha256Hex } from "./hash.ts";
import { TOY_ENGINE, TOY_ENGINE_V2, toyStudy } from "./_test_engine.ts";

function norm(text: string, engine = TOY_ENGINE): NormalizedStudy {
  const r = parseStudyText(text, "t.yaml", { engines: [engine] });
  if (!r.ok) throw new Error(r.problems.map((p) => p.message).join("\n"));
  return normalizeStudy(r.study, { text: r.text, sourcePath: "/abs/t.yaml", engines: [engine] });
}

Deno.test("normalizeStudy fills engine, run and observable defaults", () => {
  const s = norm(toyStudy());
  deepStrictEqual(s.engine, { id: "toy-engine", version: "1.0.0" });
  equal(s.seed, "42");
  equal(s.realisations, 1);
  deepStrictEqual(s.run, { duration: 10, sampleInterval: 0.5, tolerance: 1e-9, maxDistance: 1e6 });
  deepStrictEqual(s.observables.record, ["cluster", "evaporation", "msd"]);
  // Defaults of docs/methods.md §8 (f = 0.3, k = 2, K = 3, outward cosine 0.5) and engines/observables (0.25).
  deepStrictEqual(s.observables.classification, {
    separationFactor: 0.3,
    radiusFactor: 2,
    stickyFrames: 3,
    outwardCosine: 0.5,
    speedTolerance: 0.25,
  });
  equal(s.points.length, 1);
  equal(s.points[0].label, "base");
  deepStrictEqual(s.points[0].varied, {});
  deepStrictEqual(s.points[0].params, {
    count: 8,
    polarity: 0,
    shape: { kind: "disk", radius: 2 },
    friction: { alpha: 0, alphaPrime: 0 },
    label: "toy",
  });
  equal(s.description, "A toy study.");
  equal(s.sourcePath, "/abs/t.yaml");
  equal(s.text, toyStudy());
  ok(/^[0-9a-f]{64}$/.test(s.hash) && /^[0-9a-f]{64}$/.test(s.points[0].pointHash));
});

Deno.test("normalizeStudy writes text seeds as given and orders observables canonically", () => {
  const s = norm(
    toyStudy("observables:\n  record: [msd, cluster]\n").replace("seed: 42", 'seed: "run-2026"'),
  );
  equal(s.seed, "run-2026");
  deepStrictEqual(s.observables.record, ["cluster", "msd"]);
});

Deno.test("normalizeStudy expands the sweep into points with full parameters and labels", () => {
  const s = norm(
    toyStudy(
      "sweep:\n  grid:\n    count: [4, 6]\n  zip:\n    - { friction.alpha: [0, 0.1], label: [a, b] }\n",
    ),
  );
  deepStrictEqual(s.points.map((p) => p.label), [
    "count=4, friction.alpha=0, label=a",
    "count=4, friction.alpha=0.1, label=b",
    "count=6, friction.alpha=0, label=a",
    "count=6, friction.alpha=0.1, label=b",
  ]);
  deepStrictEqual(s.points.map((p) => p.index), [0, 1, 2, 3]);
  deepStrictEqual(s.points[3].params, {
    count: 6,
    polarity: 0,
    shape: { kind: "disk", radius: 2 },
    friction: { alpha: 0.1, alphaPrime: 0 },
    label: "b",
  });
  equal(new Set(s.points.map((p) => p.paramsHash)).size, 4);
});

const REORDERED = `# the same study, every map written in another order
run:
  sampleInterval: 0.5
  duration: 10
seed: 42
parameters:
  shape: { radius: 2, kind: disk }
  count: 8
engine: toy-engine
description: A toy study.
name: toy
`;

Deno.test("normalizeStudy hashes do not depend on key order, comments or the file's place", () => {
  const a = norm(toyStudy());
  const b = norm(REORDERED);
  equal(b.hash, a.hash);
  equal(b.points[0].pointHash, a.points[0].pointHash);
  equal(b.points[0].paramsHash, a.points[0].paramsHash);
});

Deno.test("normalizeStudy study hash does not depend on the order of grid paths or sweep values", () => {
  const a = norm(toyStudy("sweep:\n  grid:\n    count: [4, 6]\n    label: [a, b]\n"));
  const b = norm(toyStudy("sweep:\n  grid:\n    label: [b, a]\n    count: [6, 4]\n"));
  equal(b.hash, a.hash);
  deepStrictEqual(new Set(b.points.map((p) => p.pointHash)), new Set(a.points.map((p) => p.pointHash)));
  notEqual(b.points[0].label, a.points[0].label);
});

Deno.test("normalizeStudy keeps paramsHash when run controls change but changes pointHash", () => {
  const a = norm(toyStudy());
  const b = norm(toyStudy().replace("duration: 10", "duration: 20"));
  equal(b.points[0].paramsHash, a.points[0].paramsHash);
  notEqual(b.points[0].pointHash, a.points[0].pointHash);
  notEqual(b.hash, a.hash);
  const c = norm(toyStudy("observables:\n  classification: { stickyFrames: 4 }\n"));
  equal(c.points[0].paramsHash, a.points[0].paramsHash);
  notEqual(c.points[0].pointHash, a.points[0].pointHash);
});

Deno.test("normalizeStudy keeps hashes for the default profile binning and changes pointHash for another", () => {
  const a = norm(toyStudy());
  const same = norm(toyStudy("observables:\n  profile: { bins: 30, binFraction: 0.1 }\n"));
  equal(same.points[0].pointHash, a.points[0].pointHash);
  equal(same.observables.profile, undefined);
  const wide = norm(toyStudy("observables:\n  profile: { bins: 50 }\n"));
  deepStrictEqual(wide.observables.profile, { bins: 50, binFraction: 0.1 });
  equal(wide.points[0].paramsHash, a.points[0].paramsHash);
  notEqual(wide.points[0].pointHash, a.points[0].pointHash);
});

Deno.test("normalizeStudy changes pointHash but not paramsHash with the engine version", () => {
  const a = norm(toyStudy());
  const b = norm(toyStudy(), TOY_ENGINE_V2);
  equal(b.points[0].paramsHash, a.points[0].paramsHash);
  notEqual(b.points[0].pointHash, a.points[0].pointHash);
});

Deno.test("normalizeStudy leaves workers out of every hash", () => {
  const a = norm(toyStudy());
  const b = norm(toyStudy().replace("  sampleInterval: 0.5", "  sampleInterval: 0.5\n  workers: 2"));
  equal(b.run.workers, 2);
  equal(b.hash, a.hash);
  equal(b.points[0].pointHash, a.points[0].pointHash);
});

Deno.test("normalizeStudy gives the same parameters the same paramsHash whatever the defaults written", () => {
  const a = norm(toyStudy());
  const b = norm(toyStudy().replace("count: 8", "count: 8\n  polarity: 0.0\n  friction: { alpha: 0 }"));
  equal(b.points[0].paramsHash, a.points[0].paramsHash);
});

Deno.test("normalizeStudy refuses a study whose engine is not among the engines given", () => {
  const r = parseStudyText(toyStudy(), "t.yaml", { engines: [TOY_ENGINE] });
  ok(r.ok);
  throws(() => normalizeStudy(r.study, { text: r.text, sourcePath: "x", engines: [] }), /not registered/);
});

// Databases written before input fingerprints existed must keep matching: a point of an engine without input
// files hashes exactly the fields it always did. Spindrift's own identity rule; common practice, no source.
Deno.test("normalizeStudy: points of engines without input files hash as before; file engines add fingerprints", () => {
  const s = norm(toyStudy());
  const p = s.points[0];
  deepStrictEqual(p.inputs, {});
  const { workers: _w, cluster: _c, ...run } = s.run;
  equal(
    p.pointHash,
    contentHash("spindrift-point-v1", {
      engine: s.engine,
      params: p.params,
      run,
      observables: s.observables,
    }),
  );
  const dir = Deno.makeTempDirSync();
  try {
    const text = `name: f\nengine: imported-tracks-2d\nparameters: { source: { files: "r{index}.csv" } }\n` +
      `realisations: 2\nseed: 1\nrun: { duration: 1, sampleInterval: 0.5 }\n`;
    Deno.writeTextFileSync(`${dir}/r0.csv`, "t,id,x,y,circulation\n0,1,0,0,1\n");
    const load = (t: string) => {
      const r = parseStudyText(t, `${dir}/f.yaml`);
      if (!r.ok) throw new Error(r.problems[0].message);
      return normalizeStudy(r.study, { text: t, sourcePath: `${dir}/f.yaml` });
    };
    const a = load(text).points[0];
    // SHA-256 of the file's bytes (NIST FIPS 180-4), and "missing" for the file not there yet.
    deepStrictEqual(a.inputs, {
      "r0.csv": `sha256:${sha256Hex("t,id,x,y,circulation\n0,1,0,0,1\n")}`,
      "r1.csv": "missing",
    });
    Deno.writeTextFileSync(`${dir}/r0.csv`, "t,id,x,y,circulation\n0,1,0.5,0,1\n");
    const b = load(text).points[0];
    notEqual(b.pointHash, a.pointHash, "new content, new point");
    equal(b.paramsHash, a.paramsHash, "same parameters, same seeds");
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
