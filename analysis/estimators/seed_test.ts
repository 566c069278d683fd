import assert from "node:assert/strict";
import { createHash } from "node:crypto";
import { stateFromSeed, streamFromSeed } from "./seed.ts";

Deno.test("stateFromSeed takes the first four little-endian words of SHA-256(seed)", () => {
  // FIPS 180-4 test vector: SHA-256("abc") = ba7816bf 8f01cfea 414140de 5dae2223 …
  const abc = stateFromSeed("abc");
  assert.deepEqual(abc, [0xbf1678ba | 0, 0xeacf018f | 0, 0xde404141 | 0, 0x2322ae5d | 0]);
  const h = createHash("sha256").update("spindrift", "utf8").digest();
  assert.deepEqual(stateFromSeed("spindrift"), [
    h.readInt32LE(0),
    h.readInt32LE(4),
    h.readInt32LE(8),
    h.readInt32LE(12),
  ]);
});

Deno.test("streamFromSeed is reproducible and distinct seeds give distinct streams", () => {
  const a = streamFromSeed("bootstrap/1");
  const b = streamFromSeed("bootstrap/1");
  const c = streamFromSeed("bootstrap/2");
  const xa = Array.from({ length: 8 }, () => a.uniform());
  const xb = Array.from({ length: 8 }, () => b.uniform());
  const xc = Array.from({ length: 8 }, () => c.uniform());
  assert.deepEqual(xa, xb);
  assert.notDeepEqual(xa, xc);
});

Deno.test("stateFromSeed rejects an empty seed", () => {
  assert.throws(() => stateFromSeed(""), /non-empty string/);
});
