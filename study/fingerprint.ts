/**
 * Content fingerprints of a study's input files (imported data, input templates): SHA-256 of the bytes, or
 * "missing" for a file that is not there (the run then fails it with the reader's message). They join each
 * point's identity (`normalize.ts`), so a data file replaced under the same name is computed again instead of
 * leaving stale results in the database.
 *
 * Cost: one read of each file per command (the engines read it anyway, once per realisation). Within a process
 * a file is hashed again only when its size or modification time changed: those decide when to hash, the hash
 * decides whether the content changed.
 *
 * References: NIST FIPS 180-4, Secure Hash Standard (2015), doi:10.6028/NIST.FIPS.180-4.
 *
 * @example
 * ```ts
 * fingerprintFiles(["data/walkers.csv"], "/studies"); // { "data/walkers.csv": "sha256:1f0c…" }
 * ```
 */
import { createHash } from "node:crypto";
import { isAbsolute, join } from "node:path";

/** Path → "size/mtime" at the last hash, and the hash. */
const memo = new Map<string, { stamp: string; digest: string }>();

const CHUNK = 1 << 20;

/** The fingerprint of one file: "sha256:<hex>", or "missing". */
export function fingerprintFile(path: string): string {
  let info: Deno.FileInfo;
  try {
    info = Deno.statSync(path);
  } catch {
    return "missing";
  }
  if (!info.isFile) return "missing";
  const stamp = `${info.size}/${info.mtime?.getTime() ?? 0}`;
  const known = memo.get(path);
  if (known?.stamp === stamp) return known.digest;
  const hash = createHash("sha256");
  const f = Deno.openSync(path, { read: true });
  try {
    const buf = new Uint8Array(CHUNK);
    for (;;) {
      const n = f.readSync(buf);
      if (n === null) break;
      hash.update(buf.subarray(0, n));
    }
  } finally {
    f.close();
  }
  const digest = `sha256:${hash.digest("hex")}`;
  memo.set(path, { stamp, digest });
  return digest;
}

/** Fingerprints of `files` (as named in the study), read relative to `baseDirectory` unless absolute. */
export function fingerprintFiles(files: readonly string[], baseDirectory: string): Record<string, string> {
  const out: Record<string, string> = {};
  for (const f of files) out[f] = fingerprintFile(isAbsolute(f) ? f : join(baseDirectory, f));
  return out;
}
