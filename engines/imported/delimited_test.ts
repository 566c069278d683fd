import { deepStrictEqual as assertEquals } from "node:assert/strict";
import { forEachRecord, RecordFormatError, splitRecord } from "./delimited.ts";
import { bytesSource } from "./_test_helpers.ts";

async function records(text: string, delimiter = ",", comment: string | null = "#", chunkBytes?: number) {
  const out: [number, string[]][] = [];
  await forEachRecord(
    bytesSource(new TextEncoder().encode(text)),
    { delimiter, comment, chunkBytes },
    (fields, line) => void out.push([line, [...fields]]),
  );
  return out;
}

// RFC 4180 §2 (Shafranovich 2005): rules 4–7 — fields separated by the delimiter, optional enclosing double
// quotes, quoted fields may hold delimiters, line breaks and doubled quotes.
Deno.test("splitRecord: RFC 4180 quoting rules", () => {
  assertEquals(splitRecord("aaa,bbb,ccc", ","), ["aaa", "bbb", "ccc"]); // rule 4
  assertEquals(splitRecord('"aaa","bbb","ccc"', ","), ["aaa", "bbb", "ccc"]); // rule 5
  assertEquals(splitRecord('"aaa","b,bb","ccc"', ","), ["aaa", "b,bb", "ccc"]); // rule 6
  assertEquals(splitRecord('"aaa","b""bb","ccc"', ","), ["aaa", 'b"bb', "ccc"]); // rule 7
  assertEquals(splitRecord('1,"",3', ","), ["1", "", "3"]);
  assertEquals(splitRecord("1,,3,", ","), ["1", "", "3", ""]);
  assertEquals(splitRecord('"a', ","), null); // open quote: the record continues on the next line
});

Deno.test("splitRecord: text after a closing quote is a RecordFormatError", () => {
  try {
    splitRecord('1,"ab"c,3', ",");
    throw new Error("expected a RecordFormatError");
  } catch (e) {
    if (!(e instanceof RecordFormatError)) throw e;
    if (!e.message.includes("field 2 has text after its closing quote")) throw new Error(e.message);
  }
});

Deno.test("splitRecord: tab, semicolon and whitespace delimiters", () => {
  assertEquals(splitRecord("1\t2\t3", "\t"), ["1", "2", "3"]);
  assertEquals(splitRecord("1;2,5;3", ";"), ["1", "2,5", "3"]);
  assertEquals(splitRecord("  1   2\t 3 ", "whitespace"), ["1", "2", "3"]);
});

Deno.test("forEachRecord: a quoted line break continues the record; the record keeps its first line number", async () => {
  // RFC 4180 §2 rule 6: line breaks inside quoted fields.
  const text = 't,note\n0,"two\nlines"\n1,plain\n';
  for (const chunk of [1, 3, 1024]) {
    const expected = [[1, ["t", "note"]], [2, ["0", "two\nlines"]], [4, ["1", "plain"]]];
    assertEquals(await records(text, ",", "#", chunk), expected);
  }
});

Deno.test("forEachRecord: comments and blank lines are skipped, line numbers are the file's", async () => {
  const text = "# provenance\n\nt,x\n   \n0,1\n#c\n1,2\n";
  assertEquals(await records(text), [[3, ["t", "x"]], [5, ["0", "1"]], [7, ["1", "2"]]]);
  assertEquals((await records("#x\n1\n", ",", null)).length, 2);
});

Deno.test("forEachRecord: a quote never closed is a RecordFormatError with its line", async () => {
  try {
    await records('t,x\n0,"open\n1,2\n');
    throw new Error("expected a RecordFormatError");
  } catch (e) {
    if (!(e instanceof RecordFormatError)) throw e;
    assertEquals(e.line, 2);
    if (!e.message.includes("opened on line 2 is never closed")) throw new Error(e.message);
  }
});

Deno.test("forEachRecord: returning false stops early", async () => {
  const seen: number[] = [];
  await forEachRecord(
    bytesSource(new TextEncoder().encode("a\nb\nc\n")),
    { delimiter: ",", comment: null },
    (_f, line) => {
      seen.push(line);
      return line < 2;
    },
  );
  assertEquals(seen, [1, 2]);
});
