import { deepStrictEqual, equal, ok } from "node:assert/strict";
import { z } from "zod";
import {
  childSchema,
  describeAllowed,
  findUnknownKeys,
  lookupPath,
  objectKeys,
  schemaAt,
  unwrap,
} from "./_schema_walk.ts";

const params = z.object({
  count: z.int().min(1),
  domain: z.discriminatedUnion("kind", [
    z.strictObject({ kind: z.literal("disk"), radius: z.number().positive() }),
    z.strictObject({ kind: z.literal("box"), side: z.number().positive() }),
  ]).default({ kind: "disk", radius: 1 }),
  friction: z.strictObject({ alpha: z.number().default(0) }).optional(),
  extra: z.looseObject({ a: z.number() }).optional(),
  table: z.record(z.string(), z.number()).optional(),
  list: z.array(z.strictObject({ x: z.number() })).optional(),
  late: z.lazy(() => z.strictObject({ deep: z.number() })).optional(),
  pre: z.preprocess((v) => v, z.strictObject({ p: z.number() })).optional(),
});

Deno.test("unwrap strips optional, default, lazy and preprocess wrappers", () => {
  equal(unwrap(params.shape.friction)._zod.def.type, "object");
  equal(unwrap(params.shape.domain)._zod.def.type, "union");
  equal(unwrap(params.shape.late)._zod.def.type, "object");
  equal(unwrap(params.shape.pre)._zod.def.type, "object");
});

Deno.test("objectKeys tells strict, stripping and loose objects apart", () => {
  deepStrictEqual(objectKeys(params.shape.friction), { keys: ["alpha"], open: false });
  deepStrictEqual(objectKeys(params)?.open, false); // z.object strips unknown keys: closed for the user
  deepStrictEqual(objectKeys(params.shape.extra), { keys: ["a"], open: true });
  deepStrictEqual(objectKeys(params.shape.table), { keys: [], open: true });
  equal(objectKeys(z.number()), null);
});

Deno.test("lookupPath finds fields in any union option and reports where a path fails", () => {
  ok(lookupPath(params, ["domain", "radius"]).ok);
  ok(lookupPath(params, ["domain", "side"]).ok);
  ok(lookupPath(params, ["friction", "alpha"]).ok);
  ok(lookupPath(params, ["late", "deep"]).ok);
  deepStrictEqual(lookupPath(params, ["domain", "radios"]), {
    ok: false,
    failedAt: 1,
    reason: "unknown",
    allowed: ["kind", "radius", "side"],
  });
  deepStrictEqual(lookupPath(params, ["count", "x"]), {
    ok: false,
    failedAt: 1,
    reason: "not-a-map",
    allowed: [],
  });
});

Deno.test("findUnknownKeys reports keys a stripping object would drop, with the allowed keys", () => {
  const found = findUnknownKeys(params, {
    count: 1,
    cuont: 2,
    domain: { kind: "box", side: 1, radius: 2 },
    extra: { a: 1, anything: 2 },
    table: { any: 1 },
    list: [{ x: 1 }, { y: 2 }],
  });
  deepStrictEqual(found.map((u) => u.path), [["cuont"], ["domain", "radius"], ["list", 1, "y"]]);
  deepStrictEqual(found[1].allowed, ["kind", "side"]); // the option chosen by the discriminator
  deepStrictEqual(found[2].allowed, ["x"]);
});

Deno.test("schemaAt follows the value to the matching union option", () => {
  const s = schemaAt(params, ["domain", "side"], { domain: { kind: "box", side: -1 } });
  ok(s);
  equal(describeAllowed(s), "a number > 0");
  equal(schemaAt(params, ["nothing", "here"], {}), undefined);
  equal(childSchema(params, "list", {})?._zod.def.type, "optional");
});

// Wording of allowed values (common practice, no source): read from the JSON Schema zod generates.
Deno.test("describeAllowed words numbers, integers, texts, choices, lists and unions", () => {
  equal(describeAllowed(z.int().min(1)), "an integer ≥ 1");
  equal(describeAllowed(z.number().gt(0).lt(1)), "a number > 0 and < 1");
  equal(describeAllowed(z.number().min(-1).max(1).default(0)), "a number ≥ -1 and ≤ 1");
  equal(describeAllowed(z.enum(["a", "b"])), 'one of "a", "b"');
  equal(describeAllowed(z.literal("disk")), '"disk"');
  equal(describeAllowed(z.string().min(1)), "a text (non-empty)");
  equal(describeAllowed(z.boolean()), "true or false");
  equal(describeAllowed(z.array(z.number()).min(1)), "a list (at least 1 item) of a number");
  equal(describeAllowed(z.union([z.int(), z.string()])), "an integer or a text");
  equal(describeAllowed(z.strictObject({ a: z.number(), b: z.number() })), "a map with keys a, b");
});
