import { deepStrictEqual, equal, throws } from "node:assert/strict";
import { canonicalJson, contentHash, sha256Hex } from "./hash.ts";

// FIPS 180-2, Secure Hash Standard (2002), Appendix B.1 ("abc") and B.2 (448-bit message): published digests.
Deno.test("sha256Hex matches the FIPS 180-2 test vectors", () => {
  equal(sha256Hex("abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  equal(
    sha256Hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
    "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1",
  );
});

// RFC 8259 §8.1 requires UTF-8 for JSON exchanged between systems; the hash covers the UTF-8 bytes. The digest
// of "κ" is cross-checked against Web Crypto (an independent SHA-256 entry point).
Deno.test("sha256Hex hashes the UTF-8 bytes of non-ASCII text", async () => {
  const bytes = new TextEncoder().encode("κ = 1");
  const web = new Uint8Array(await crypto.subtle.digest("SHA-256", bytes));
  equal(sha256Hex("κ = 1"), Array.from(web, (b) => b.toString(16).padStart(2, "0")).join(""));
});

// Canonical form: sorted keys, no whitespace, JSON numbers (common practice, no source; cf. RFC 8785 §3.2).
Deno.test("canonicalJson sorts keys at every depth and drops undefined properties", () => {
  equal(
    canonicalJson({ b: 1, a: { d: [3, { z: 1, y: 2 }], c: "x" }, u: undefined }),
    '{"a":{"c":"x","d":[3,{"y":2,"z":1}]},"b":1}',
  );
  equal(canonicalJson({ b: 1, a: 2 }), canonicalJson({ a: 2, b: 1 }));
});

Deno.test("canonicalJson writes numbers in their shortest round-trip form and -0 as 0", () => {
  equal(canonicalJson([1.0, 1e-9, 0.1, -0, 1e21, 123456789012]), "[1,1e-9,0.1,0,1e+21,123456789012]");
});

Deno.test("canonicalJson keeps array order and escapes strings as JSON", () => {
  equal(canonicalJson(["b", "a", 'q"\n', null, true]), '["b","a","q\\"\\n",null,true]');
});

Deno.test("canonicalJson refuses values without a JSON form", () => {
  throws(() => canonicalJson(Number.NaN), TypeError);
  throws(() => canonicalJson({ a: Infinity }), /\$\.a is Infinity/);
  throws(() => canonicalJson([undefined]), TypeError);
  throws(() => canonicalJson(() => 1), TypeError);
  throws(() => canonicalJson(1n), TypeError);
  throws(() => canonicalJson(new Date(0)), /Date/);
  throws(() => canonicalJson(new Float64Array(2)), /Float64Array/);
  const cyclic: Record<string, unknown> = {};
  cyclic.self = cyclic;
  throws(() => canonicalJson(cyclic), /cycle/);
});

Deno.test("canonicalJson accepts a shared (non-cyclic) sub-object twice", () => {
  const shared = { x: 1 };
  equal(canonicalJson({ a: shared, b: shared }), '{"a":{"x":1},"b":{"x":1}}');
});

Deno.test("contentHash separates domains and ignores key order", () => {
  equal(contentHash("d1", { a: 1, b: 2 }), contentHash("d1", { b: 2, a: 1 }));
  deepStrictEqual(contentHash("d1", { a: 1 }) === contentHash("d2", { a: 1 }), false);
  equal(contentHash("d1", { a: 1 }), sha256Hex('d1\n{"a":1}'));
});
