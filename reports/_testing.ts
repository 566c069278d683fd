/** Test helpers for the reports folder (float comparison with a readable message). */
import { AssertionError } from "node:assert";

/**
 * Asserts |got − expected| ≤ rel·|expected| (or ≤ rel when expected = 0) and prints got, expected and the
 * difference on failure.
 */
export function assertClose(got: number, expected: number, rel: number, what: string): void {
  const diff = got - expected;
  const scale = expected === 0 ? 1 : Math.abs(expected);
  if (!(Math.abs(diff) <= rel * scale)) {
    throw new AssertionError({
      message: `${what}: got ${got}, expected ${expected}, diff ${diff} (relative ${
        diff / scale
      }, tolerance ${rel})`,
    });
  }
}

/**
 * Checks that `text` is well-formed XML in the subset SVG writers produce: every tag closed in order, attribute
 * values quoted, no bare '<' or '&' in text, entity references well-formed. Returns the root element name.
 * (XML 1.0 §2.1, §3.1, §4.1 well-formedness rules; a deliberately small checker, not a full parser.)
 */
export function checkWellFormedXml(text: string): string {
  const stack: string[] = [];
  let root = "";
  let i = 0;
  const fail = (msg: string): never => {
    throw new AssertionError({
      message: `${msg} at offset ${i}: …${text.slice(Math.max(0, i - 40), i + 40)}…`,
    });
  };
  const checkText = (s: string) => {
    if (s.includes("<")) fail("bare '<' in text");
    for (const m of s.matchAll(/&[^;\s]*;?/g)) {
      if (!/^&(amp|lt|gt|quot|apos|#[0-9]+|#x[0-9a-fA-F]+);$/.test(m[0])) fail(`bad entity '${m[0]}'`);
    }
  };
  while (i < text.length) {
    const lt = text.indexOf("<", i);
    if (lt < 0) {
      checkText(text.slice(i));
      break;
    }
    checkText(text.slice(i, lt));
    i = lt;
    if (text.startsWith("<?", i)) {
      const end = text.indexOf("?>", i);
      if (end < 0) fail("unclosed processing instruction");
      i = end + 2;
    } else if (text.startsWith("<!--", i)) {
      const end = text.indexOf("-->", i);
      if (end < 0) fail("unclosed comment");
      i = end + 3;
    } else if (text.startsWith("<![CDATA[", i)) {
      const end = text.indexOf("]]>", i);
      if (end < 0) fail("unclosed CDATA");
      i = end + 3;
    } else {
      const m = /^<(\/?)([A-Za-z_][\w:.-]*)((?:\s+[\w:.-]+\s*=\s*(?:"[^"<]*"|'[^'<]*'))*)\s*(\/?)>/.exec(
        text.slice(i),
      );
      if (m === null) fail("malformed tag");
      const [whole, close, name, attrs, selfClose] = m!;
      for (const a of attrs.matchAll(/=\s*(?:"([^"]*)"|'([^']*)')/g)) checkText(a[1] ?? a[2]);
      if (close) {
        if (stack.pop() !== name) fail(`closing </${name}> does not match`);
      } else if (!selfClose) {
        if (stack.length === 0 && root !== "") fail("second root element");
        if (stack.length === 0) root = name;
        stack.push(name);
      } else if (stack.length === 0 && root === "") {
        root = name;
      }
      i += whole.length;
    }
  }
  if (stack.length > 0) fail(`unclosed <${stack[stack.length - 1]}>`);
  if (root === "") fail("no root element");
  return root;
}
