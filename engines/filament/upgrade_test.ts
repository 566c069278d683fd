import assert from "node:assert/strict";
import { upgradeFilamentParams } from "./upgrade.ts";
import { filamentParamsSchema } from "./params.ts";

const base = { units: "dimensionless", coreRadius: 1e-4, resolution: 0.1 };

Deno.test("upgradeFilamentParams: earlier shape names become the current ones, one note each", () => {
  const pairs: [string, string][] = [
    ["colliding-rings", "ring-pair"],
    ["kelvin-wave", "helix"],
    ["ring-cloud", "ring-ball"],
    ["loops", "given"],
  ];
  for (const [old, now] of pairs) {
    const up = upgradeFilamentParams({ ...base, initial: { kind: old, radius: 1 } });
    assert.deepEqual(up.params, { ...base, initial: { kind: now, radius: 1 } });
    assert.equal(up.notes.length, 1);
    assert.deepEqual(up.notes[0].path, ["initial", "kind"]);
    assert.equal(
      up.notes[0].message,
      `"${old}" is the earlier name of "${now}" (accepted until the next release): write kind: ${now}`,
    );
  }
});

Deno.test("upgradeFilamentParams: the normalFluid section becomes normalVelocity or heater", () => {
  const rest = upgradeFilamentParams({ ...base, normalFluid: { kind: "rest" } });
  assert.deepEqual(rest.params, base);
  assert.match(
    rest.notes[0].message,
    /normalFluid is replaced by normalVelocity and heater.*at rest by default/,
  );
  const uniform = upgradeFilamentParams({ ...base, normalFluid: { kind: "uniform", velocity: [0, 0, 2] } });
  assert.deepEqual(uniform.params, { ...base, normalVelocity: [0, 0, 2] });
  const heater = upgradeFilamentParams({
    ...base,
    normalFluid: { kind: "line-heater", referenceRadius: 1, referenceVelocity: 0.1, heaterRadius: 0.5 },
  });
  assert.deepEqual(heater.params, {
    ...base,
    heater: { radius: 0.5, referenceRadius: 1, referenceVelocity: 0.1 },
  });
  assert.deepEqual(heater.notes.map((n) => n.path), [["normalFluid"]]);
  assert.match(heater.notes[0].message, /radius was heaterRadius/);
});

Deno.test("upgradeFilamentParams: the old spelling parses to exactly the parameters of the new one", () => {
  const old = {
    ...base,
    normalFluid: { kind: "line-heater", referenceRadius: 1, referenceVelocity: 0.1, heaterRadius: 0.5 },
    friction: { kind: "temperature", temperature: 1.6 },
    initial: { kind: "ring-cloud", count: 3, radius: 0.5, cloudRadius: 2 },
  };
  const now = {
    ...base,
    heater: { radius: 0.5, referenceRadius: 1, referenceVelocity: 0.1 },
    friction: { kind: "temperature", temperature: 1.6 },
    initial: { kind: "ring-ball", count: 3, radius: 0.5, cloudRadius: 2 },
  };
  assert.deepEqual(
    filamentParamsSchema.parse(upgradeFilamentParams(old).params),
    filamentParamsSchema.parse(now),
  );
});

Deno.test("upgradeFilamentParams: current spellings, unknown kinds and mixed sections are left alone", () => {
  for (
    const p of [
      { ...base, initial: { kind: "ring", radius: 1 } },
      { ...base, initial: { kind: "ring-ball", count: 2 }, normalVelocity: [1, 0, 0] },
      { ...base, initial: { kind: "rings" } },
      { ...base, normalFluid: { kind: "uniform", velocity: [0, 0, 1] }, normalVelocity: [0, 0, 1] },
      { ...base, normalFluid: { kind: "swirl" } },
      {},
    ]
  ) {
    const up = upgradeFilamentParams(p);
    assert.deepEqual(up.params, p);
    assert.deepEqual(up.notes, []);
  }
});
