import { deepStrictEqual as assertEquals } from "node:assert/strict";
import { bytesSource } from "./_test_helpers.ts";
import { forEachLine, TextFormatError } from "./text_lines.ts";

async function lines(text: string | Uint8Array, chunkBytes?: number): Promise<[number, string][]> {
  const bytes = typeof text === "string" ? new TextEncoder().encode(text) : text;
  const out: [number, string][] = [];
  await forEachLine(bytesSource(bytes), (line, n) => void out.push([n, line]), { chunkBytes });
  return out;
}

// Line ends: LF and CRLF, as in RFC 4180 §2 rule 1 (CRLF) and POSIX text files (LF); common practice.
Deno.test("forEachLine: LF and CRLF line ends, a last line without a line end", async () => {
  assertEquals(await lines("a\nb\r\nc"), [[1, "a"], [2, "b"], [3, "c"]]);
  assertEquals(await lines("a\n\nb\n"), [[1, "a"], [2, ""], [3, "b"]]);
  assertEquals(await lines(""), []);
});

Deno.test("forEachLine: lines and multi-byte characters split across chunk boundaries", async () => {
  // "µ" (U+00B5) is 2 bytes and "ξ" (U+03BE) 2 bytes in UTF-8 (RFC 3629 §3); 3-byte chunks split them.
  const text = "t,µm\r\n1,ξξξ\n2,αβγδ\n";
  for (const chunk of [1, 2, 3, 5, 7, 64]) {
    assertEquals(await lines(text, chunk), [[1, "t,µm"], [2, "1,ξξξ"], [3, "2,αβγδ"]], `chunk ${chunk}`);
  }
});

Deno.test("forEachLine: a UTF-8 byte-order mark is skipped", async () => {
  const bytes = new Uint8Array([0xef, 0xbb, 0xbf, ...new TextEncoder().encode("t,x\n")]);
  assertEquals(await lines(bytes), [[1, "t,x"]]);
});

Deno.test("forEachLine: invalid UTF-8 is a TextFormatError naming its line", async () => {
  // 0xFF never occurs in UTF-8 (RFC 3629 §1).
  const bytes = new Uint8Array([...new TextEncoder().encode("a\nb\nc"), 0xff, 0x0a, 0x64, 0x0a]);
  for (const chunk of [2, 1024]) {
    try {
      await lines(bytes, chunk);
      throw new Error("expected a TextFormatError");
    } catch (e) {
      if (!(e instanceof TextFormatError)) throw e;
      assertEquals(e.line, 3, `chunk ${chunk}: ${e.message}`);
      if (!e.message.includes("line 3 is not valid UTF-8")) throw new Error(e.message);
    }
  }
});

Deno.test("forEachLine: returning false stops reading", async () => {
  const out: string[] = [];
  await forEachLine(bytesSource(new TextEncoder().encode("a\nb\nc\n")), (line) => {
    out.push(line);
    return line !== "b";
  });
  assertEquals(out, ["a", "b"]);
});
