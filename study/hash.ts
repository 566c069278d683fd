/**
 * Content hashing for studies: a canonical JSON text and its SHA-256.
 *
 * Every identifier that must survive a restart (parameter-point hashes, realisation keys, the study hash) is
 * the SHA-256 of the canonical JSON of a plain value, so two study files that differ only in key order, spacing
 * or comments give the same identifiers.
 *
 * Method: canonical JSON = JSON with object keys sorted by UTF-16 code units (the order of
 * `Array.prototype.sort`), no whitespace, numbers written by `JSON.stringify` (shortest round-trip form, so
 * `1.0` and `1` are the same number), `-0` written as `0`, and properties whose value is `undefined` left out.
 * Non-finite numbers, functions, symbols, bigints, `undefined` array items and non-plain objects (Date, Map,
 * typed arrays, …) have no canonical JSON form and are refused.
 *
 * References: NIST FIPS 180-4, Secure Hash Standard (2015), doi:10.6028/NIST.FIPS.180-4 (SHA-256).
 *
 * @example
 * ```ts
 * canonicalJson({ b: 1, a: [2, "x"] }); // '{"a":[2,"x"],"b":1}'
 * sha256Hex("abc"); // "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
 * ```
 */
import { createHash } from "node:crypto";

/**
 * Canonical JSON text of a plain value (sorted keys, no whitespace, no `undefined` properties).
 *
 * @throws TypeError for values without a JSON form (NaN, ±Infinity, functions, symbols, bigints, `undefined`
 * at top level or inside an array, non-plain objects) and for cyclic structures.
 */
export function canonicalJson(value: unknown): string {
  const parts: string[] = [];
  write(value, parts, "$", new Set());
  return parts.join("");
}

function write(value: unknown, out: string[], where: string, seen: Set<object>): void {
  if (value === null) {
    out.push("null");
    return;
  }
  switch (typeof value) {
    case "number":
      if (!Number.isFinite(value)) {
        throw new TypeError(`canonicalJson: ${where} is ${value}, which has no JSON form`);
      }
      out.push(JSON.stringify(value === 0 ? 0 : value));
      return;
    case "string":
    case "boolean":
      out.push(JSON.stringify(value));
      return;
    case "object":
      break;
    default:
      throw new TypeError(`canonicalJson: ${where} is a ${typeof value}, which has no JSON form`);
  }
  const obj = value as object;
  if (seen.has(obj)) throw new TypeError(`canonicalJson: ${where} is a cycle`);
  seen.add(obj);
  if (Array.isArray(obj)) {
    out.push("[");
    for (let i = 0; i < obj.length; i++) {
      if (i > 0) out.push(",");
      write(obj[i], out, `${where}[${i}]`, seen);
    }
    out.push("]");
  } else {
    const proto = Object.getPrototypeOf(obj);
    if (proto !== Object.prototype && proto !== null) {
      throw new TypeError(
        `canonicalJson: ${where} is a ${obj.constructor?.name ?? "non-plain object"}, not plain data`,
      );
    }
    const record = obj as Record<string, unknown>;
    const keys = Object.keys(record).filter((k) => record[k] !== undefined).sort();
    out.push("{");
    keys.forEach((k, i) => {
      if (i > 0) out.push(",");
      out.push(JSON.stringify(k), ":");
      write(record[k], out, `${where}.${k}`, seen);
    });
    out.push("}");
  }
  seen.delete(obj);
}

/** Lower-case hex SHA-256 of the UTF-8 encoding of `text` (64 characters). */
export function sha256Hex(text: string): string {
  return createHash("sha256").update(text, "utf8").digest("hex");
}

/** SHA-256 of `domain + "\n" + canonicalJson(value)`: a content hash separated by purpose (`domain`). */
export function contentHash(domain: string, value: unknown): string {
  return sha256Hex(`${domain}\n${canonicalJson(value)}`);
}
