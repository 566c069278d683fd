import { assert, assertEquals, assertThrows } from "../../test/_assert.ts";
import { RandomStream } from "../random.ts";
import { lastLines, TailBuffer } from "./tail.ts";

// Reference: the plain concatenation of everything written, then its last `capacity` bytes (common practice,
// no source).
Deno.test("TailBuffer keeps exactly the last capacity bytes, whatever the chunk sizes", () => {
  const rng = RandomStream.fromState([5, 6, 7, 8]);
  for (const capacity of [1, 7, 64, 1000]) {
    const tail = new TailBuffer(capacity);
    const all: number[] = [];
    for (let c = 0; c < 200; c++) {
      const len = rng.integer(3 * capacity + 2);
      const chunk = new Uint8Array(len);
      for (let i = 0; i < len; i++) chunk[i] = rng.integer(256);
      tail.write(chunk);
      all.push(...chunk);
      const expected = Uint8Array.from(all.slice(Math.max(0, all.length - capacity)));
      assertEquals(tail.bytesKept(), expected, `capacity ${capacity}, after chunk ${c}`);
      assertEquals(tail.bytes, all.length);
    }
  }
});

Deno.test("TailBuffer.text starts at a whole line once bytes were dropped", () => {
  const tail = new TailBuffer(16);
  tail.write(new TextEncoder().encode("first line\nsecond\nthird\n")); // keeps "ne\nsecond\nthird\n"
  const t = tail.text();
  assert(t.truncated);
  assertEquals(t.text, "second\nthird\n");
  assertEquals(t.bytes, 24);
  const short = new TailBuffer(64);
  short.write(new TextEncoder().encode("ok\n"));
  assertEquals(short.text(), { text: "ok\n", bytes: 3, truncated: false });
});

Deno.test("TailBuffer.text starts at a character boundary and replaces invalid UTF-8 instead of failing", () => {
  // UTF-8 byte layout: RFC 3629 §3; replacement of invalid bytes: WHATWG Encoding Standard §8.1.1 (UTF-8 decoder).
  const tail = new TailBuffer(3);
  tail.write(new TextEncoder().encode("aé€")); // 61 c3 a9 e2 82 ac: the last 3 bytes are the whole "€"
  assertEquals(tail.text().text, "€");
  const cut = new TailBuffer(4);
  cut.write(new TextEncoder().encode("€€")); // keeps ac e2 82 ac: the cut-off continuation byte is skipped
  assertEquals(cut.text().text, "€");
  const bad = new TailBuffer(8);
  bad.write(Uint8Array.of(0x6f, 0x6b, 0xff, 0x21));
  assertEquals(bad.text().text, "ok\ufffd!");
});

Deno.test("TailBuffer refuses a capacity below 1", () => {
  assertThrows(() => new TailBuffer(0), RangeError, "capacity");
});

Deno.test("lastLines keeps the last lines and bounds the length", () => {
  assertEquals(lastLines("a\nb\nc\nd\n\n", 2, 100), "c\nd");
  assertEquals(lastLines("0123456789", 5, 4), "…789");
});
