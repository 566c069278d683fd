/** Tool version, Deno version and the git commit of the tool's checkout (read from .git without running git). */
import type { Provenance } from "../study/runner.ts";

export const TOOL_VERSION = "0.1.0";

const ROOT = new URL("../", import.meta.url);

function readText(url: URL): string | null {
  try {
    return Deno.readTextFileSync(url);
  } catch {
    return null;
  }
}

/** The commit the tool's checkout is at, or null when it is not a git checkout. */
export function gitCommit(): string | null {
  const head = readText(new URL(".git/HEAD", ROOT))?.trim();
  if (!head) return null;
  if (/^[0-9a-f]{40}$/.test(head)) return head;
  const ref = head.startsWith("ref: ") ? head.slice(5) : null;
  if (!ref) return null;
  const loose = readText(new URL(`.git/${ref}`, ROOT))?.trim();
  if (loose && /^[0-9a-f]{40}$/.test(loose)) return loose;
  const packed = readText(new URL(".git/packed-refs", ROOT));
  for (const line of packed?.split("\n") ?? []) {
    const [sha, name] = line.split(" ");
    if (name === ref && /^[0-9a-f]{40}$/.test(sha)) return sha;
  }
  return null;
}

export function provenance(): Provenance {
  return { toolVersion: TOOL_VERSION, denoVersion: Deno.version.deno, gitCommit: gitCommit() };
}
