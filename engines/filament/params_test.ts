import assert from "node:assert/strict";
import { filamentParamsSchema } from "./params.ts";

const base = { units: "dimensionless", coreRadius: 1e-4, resolution: 0.1 };

function issues(p: unknown): string[] {
  const r = filamentParamsSchema.safeParse(p);
  return r.success ? [] : r.error.issues.map((i) => `${i.path.join(".")}: ${i.message}`);
}

Deno.test("filamentParamsSchema fills the documented defaults", () => {
  const p = filamentParamsSchema.parse({ resolution: 1e-5, initial: { kind: "ring", radius: 1e-4 } });
  assert.equal(p.units, "physical");
  assert.equal(p.velocity, "biot-savart");
  assert.deepEqual(p.domain, { kind: "unbounded" });
  assert.deepEqual(p.friction, { kind: "none" });
  assert.equal(p.numerics.theta, 0.4);
  assert.equal(p.numerics.dtFactor, 3);
  assert.equal(p.numerics.minSpacingFactor, 0.5);
  assert.deepEqual(p.initial, { kind: "ring", radius: 1e-4, centre: [0, 0, 0], normal: [0, 0, 1] });
  assert.deepEqual(p.normalVelocity, [0, 0, 0]);
  assert.equal(p.heater, undefined);
});

Deno.test("filamentParamsSchema: a heater excludes a uniform normal velocity and the periodic box", () => {
  const heater = { radius: 0.1, referenceRadius: 1, referenceVelocity: 1, normalToSuperRatio: 0.5 };
  const ring = { kind: "ring", radius: 1 };
  assert.deepEqual(issues({ ...base, heater, initial: ring }), []);
  assert.match(
    issues({ ...base, heater, normalVelocity: [0, 0, 1], initial: ring }).join(),
    /normalVelocity: a uniform normal velocity and a heater cannot be combined/,
  );
  assert.match(
    issues({ ...base, heater, domain: { kind: "periodic", size: 4 }, initial: ring }).join(),
    /heater: a heater is only available in the unbounded domain/,
  );
});

Deno.test("filamentParamsSchema refuses inconsistent parameters with paths and messages", () => {
  assert.match(
    issues({ units: "dimensionless", resolution: 0.1, initial: { kind: "ring", radius: 1 } }).join(),
    /coreRadius.*required/,
  );
  assert.match(
    issues({ ...base, initial: { kind: "helix", amplitude: 0.01 } }).join(),
    /initial.kind: helix requires/,
  );
  assert.match(
    issues({ ...base, initial: { kind: "ring-ball", radius: 1, cloudRadius: 3 } }).join(),
    /exactly one of count, targetLineDensity/,
  );
  assert.match(
    issues({ ...base, initial: { kind: "ring-ball", count: 3, radius: 0.2, cloudRadius: 3 } }).join(),
    /initial.radius: ring radius 0.2 is below 3·resolution/,
  );
  assert.match(
    issues({
      ...base,
      friction: { kind: "temperature", temperature: 0.8 },
      initial: { kind: "ring", radius: 1 },
    })
      .join(),
    /friction.temperature: temperature 0.8 K is outside/,
  );
  assert.match(
    issues({
      ...base,
      heater: { radius: 0.1, referenceRadius: 1, referenceVelocity: 1 },
      initial: { kind: "ring", radius: 1 },
    }).join(),
    /normalToSuperRatio/,
  );
  assert.match(issues({ ...base, initial: { kind: "given" } }).join(), /exactly one of loops, file/);
  assert.match(issues({ ...base, resolutoin: 1, initial: { kind: "ring", radius: 1 } }).join(), /resolutoin/);
  assert.match(
    issues({ ...base, domain: { kind: "periodic", size: 0.5 }, initial: { kind: "ring", radius: 0.1 } })
      .join(),
    /domain.size/,
  );
});

Deno.test("filamentParamsSchema accepts every initial shape", () => {
  const ok = [
    { kind: "ring", radius: 1 },
    { kind: "ring-pair", radius: 1, separation: 2 },
    { kind: "ring-ball", targetLineDensity: 2, radius: { mean: 1, sd: 0.1 }, cloudRadius: 3 },
    { kind: "given", loops: [[[0, 0, 0], [1, 0, 0], [0, 1, 0]]] },
    { kind: "given", file: "x.json" },
  ];
  for (const initial of ok) assert.deepEqual(issues({ ...base, initial }), [], JSON.stringify(initial));
  assert.deepEqual(
    issues({
      ...base,
      domain: { kind: "periodic", size: 2 },
      initial: { kind: "helix", amplitude: 0.01 },
    }),
    [],
  );
});
