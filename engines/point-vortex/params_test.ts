import assert from "node:assert/strict";
import { z } from "zod";
import { pointVortexParamsSchema } from "./params.ts";

function issues(input: unknown): { path: string; message: string }[] {
  const r = pointVortexParamsSchema.safeParse(input);
  assert.equal(r.success, false, "expected the parameters to be rejected");
  return r.error!.issues.map((i) => ({ path: i.path.join("."), message: i.message }));
}

function hasIssue(input: unknown, path: string, fragment: string): void {
  const list = issues(input);
  const hit = list.find((i) => i.path === path && i.message.includes(fragment));
  assert.ok(hit, `no issue at "${path}" containing "${fragment}"; got ${JSON.stringify(list)}`);
}

const cloud = (extra: object = {}) => ({ kind: "random-cloud", count: 64, radius: 8, ...extra });

Deno.test("pointVortexParamsSchema fills documented defaults", () => {
  const p = pointVortexParamsSchema.parse({ initial: cloud() });
  assert.equal(p.lengthUnit, "ℓ");
  assert.deepEqual(p.domain, { kind: "unbounded" });
  assert.deepEqual(p.friction, { alpha: 0, alphaPrime: 0, normalVelocity: [0, 0] });
  assert.equal(p.annihilationDistance, 0);
  assert.deepEqual(p.integrator, { absoluteTolerance: 1e-12, stepCapFactor: 0.2, maxSteps: 100_000_000 });
  assert.ok(p.initial.kind === "random-cloud");
  assert.equal(p.initial.polarity, 0);
  assert.equal(p.initial.shape, "uniform-disk");
  assert.equal(p.initial.minSeparation, 0);
  assert.deepEqual(p.initial.centre, [0, 0]);
});

Deno.test("pointVortexParamsSchema rejects an odd count with zero polarity at initial.count", () => {
  // p = 0 means N₊ = N₋ = N/2 (docs/methods.md §3.2), impossible for odd N.
  hasIssue({ initial: cloud({ count: 63 }) }, "initial.count", "must be even");
});

Deno.test("pointVortexParamsSchema rejects a polarity that gives a non-integer N₊", () => {
  hasIssue({ initial: cloud({ count: 10, polarity: 0.15 }) }, "initial.polarity", "not an integer");
  // 10·(1 + 0.2)/2 = 6 is allowed, and so is an odd count with p = 1/3 (N = 3: N₊ = 2).
  assert.ok(pointVortexParamsSchema.safeParse({ initial: cloud({ count: 10, polarity: 0.2 }) }).success);
  assert.ok(pointVortexParamsSchema.safeParse({ initial: cloud({ count: 3, polarity: 1 / 3 }) }).success);
});

Deno.test("pointVortexParamsSchema rejects polarity outside [-1, 1] and non-integer counts", () => {
  hasIssue({ initial: cloud({ polarity: 1.5 }) }, "initial.polarity", "");
  hasIssue({ initial: cloud({ count: 2.5 }) }, "initial.count", "");
  hasIssue({ initial: cloud({ count: 0 }) }, "initial.count", "");
});

Deno.test("pointVortexParamsSchema requires the cloud inside a disk domain", () => {
  hasIssue({ domain: { kind: "disk", radius: 5 }, initial: cloud() }, "initial.radius", "inside the disk");
  // Gaussian clouds must fit with 3σ.
  hasIssue(
    { domain: { kind: "disk", radius: 10 }, initial: cloud({ shape: "gaussian", radius: 4 }) },
    "initial.radius",
    "3σ",
  );
  assert.ok(
    pointVortexParamsSchema.safeParse({ domain: { kind: "disk", radius: 40 }, initial: cloud() }).success,
  );
});

Deno.test("pointVortexParamsSchema rejects unknown keys, a zero circulation and an empty vortex list", () => {
  hasIssue({ initial: cloud(), frction: {} }, "", "frction");
  hasIssue({ initial: cloud({ radiuss: 2 }) }, "initial", "radiuss");
  hasIssue(
    { initial: { kind: "explicit", vortices: [{ x: 0, y: 0, circulation: 0 }] } },
    "initial.vortices.0.circulation",
    "nonzero",
  );
  hasIssue({ initial: { kind: "explicit", vortices: [] } }, "initial.vortices", "");
});

Deno.test("pointVortexParamsSchema rejects coincident explicit vortices, also modulo a periodic box", () => {
  const v = (x: number, y: number, circulation: number) => ({ x, y, circulation });
  hasIssue(
    { initial: { kind: "explicit", vortices: [v(1, 2, 1), v(1, 2, -1)] } },
    "initial.vortices.1",
    "coincident",
  );
  hasIssue(
    {
      domain: { kind: "periodic", side: 4 },
      initial: { kind: "explicit", vortices: [v(1, 0, 1), v(5, 0, -1)] },
    },
    "initial.vortices.1",
    "coincident",
  );
});

Deno.test("pointVortexParamsSchema requires zero net circulation in a periodic box unless a background is accepted", () => {
  const vs = [{ x: 0, y: 0, circulation: 1 }, { x: 1, y: 0, circulation: 1 }];
  hasIssue(
    { domain: { kind: "periodic", side: 10 }, initial: { kind: "explicit", vortices: vs } },
    "initial.vortices",
    "ΣΓ",
  );
  hasIssue(
    { domain: { kind: "periodic", side: 40 }, initial: cloud({ count: 64, polarity: 0.5 }) },
    "initial.polarity",
    "periodic",
  );
  assert.ok(
    pointVortexParamsSchema.safeParse({
      domain: { kind: "periodic", side: 10, neutralizingBackground: true },
      initial: { kind: "explicit", vortices: vs },
    }).success,
  );
});

Deno.test("pointVortexParamsSchema rejects impossible packings and a minimum separation below the annihilation distance", () => {
  hasIssue(
    { initial: cloud({ count: 1000, radius: 2, minSeparation: 0.2 }) },
    "initial.minSeparation",
    "packing",
  );
  hasIssue(
    { initial: cloud({ minSeparation: 0.05 }), annihilationDistance: 0.1 },
    "initial.minSeparation",
    "annihilat",
  );
});

Deno.test("pointVortexParamsSchema: a cloud without minSeparation keeps twice the annihilation distance", () => {
  // A minimal cloud with annihilation must not contradict itself through a default (minSeparation ≥
  // 2 d_ann keeps pairs from annihilating at once: common practice, no source).
  const p = pointVortexParamsSchema.parse({ initial: cloud(), annihilationDistance: 0.1 });
  assert.equal(p.initial.kind === "random-cloud" && p.initial.minSeparation, 0.2);
  const q = pointVortexParamsSchema.parse({ initial: cloud() });
  assert.equal(q.initial.kind === "random-cloud" && q.initial.minSeparation, 0);
  // The default can still be too large for the cloud: the message says it is the default.
  hasIssue(
    { initial: cloud({ count: 1000, radius: 2 }), annihilationDistance: 0.1 },
    "initial.radius",
    "(the default, 2 × annihilationDistance) is too large",
  );
});

Deno.test("pointVortexParamsSchema reports every problem at once", () => {
  const list = issues({ domain: { kind: "disk", radius: 5 }, initial: cloud({ count: 63 }), bogus: 1 });
  assert.ok(list.length >= 3, JSON.stringify(list));
});

Deno.test("pointVortexParamsSchema converts to a JSON Schema with units in the descriptions", () => {
  const js = JSON.stringify(z.toJSONSchema(pointVortexParamsSchema, { io: "input" }));
  for (const fragment of ["length units ℓ", "units of κ", "κ/ℓ"]) assert.ok(js.includes(fragment), fragment);
});

Deno.test("pointVortexParamsSchema reports a negative or fractional count once, without a spurious parity issue", () => {
  for (const count of [-3, 2.5, 0]) {
    const list = issues({ initial: cloud({ count }) });
    assert.deepEqual(list.map((i) => i.path), ["initial.count"], JSON.stringify(list));
    assert.ok(!list[0].message.includes("odd"), list[0].message);
  }
});
