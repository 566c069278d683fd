import { assertEquals, assertThrows } from "../test/_assert.ts";
import { decodeFrame, encodeFrame } from "./frame_codec.ts";

Deno.test("encodeFrame/decodeFrame round-trip every column bit for bit, using only the first n entries", () => {
  const x = new Float64Array([Math.PI, -0, 1e-310, Number.MAX_VALUE, 99]);
  const id = new Int32Array([7, -2147483648, 2147483647, 0, 99]);
  const label = new Uint8Array([0, 1, 2, 255, 9]);
  const enc = encodeFrame(4, { id, x, label });
  assertEquals(enc.layout, "id:i32,x:f64,label:u8");
  assertEquals(enc.data.byteLength, 4 * (4 + 8 + 1));
  const dec = decodeFrame(enc.layout, enc.data, 4);
  assertEquals(Array.from(dec.x), Array.from(x.subarray(0, 4)));
  assertEquals(Object.is(dec.x[1], -0), true);
  assertEquals(Array.from(dec.id), Array.from(id.subarray(0, 4)));
  assertEquals(Array.from(dec.label), Array.from(label.subarray(0, 4)));
});

Deno.test("decodeFrame rejects a truncated blob with a clear message", () => {
  const enc = encodeFrame(3, { x: new Float64Array(3) });
  assertThrows(() => decodeFrame(enc.layout, enc.data.subarray(0, 10), 3), Error, "needs more");
});

Deno.test("encodeFrame handles an empty frame", () => {
  const enc = encodeFrame(0, { x: new Float64Array(0) });
  assertEquals(enc.data.byteLength, 0);
  assertEquals(decodeFrame(enc.layout, enc.data, 0).x.length, 0);
});
