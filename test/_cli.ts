/** Running the command line in a subprocess, with the launcher's permissions, as a user would. */
import { assert } from "./_assert.ts";
import { REPO } from "./_study.ts";

/** The permissions the launcher (`./spindrift`) gives every command that starts no program. */
export const PERMS = [
  "--allow-read",
  "--allow-write",
  "--allow-env",
  "--allow-sys=hostname,statfs,systemMemoryInfo",
];

/** The command `spindrift <args>` as a subprocess (stdout and stderr piped). */
export function cli(args: string[], opts: { cwd?: string; env?: Record<string, string> } = {}): Deno.Command {
  return new Deno.Command(Deno.execPath(), {
    args: ["run", "--quiet", "--no-prompt", ...PERMS, `${REPO}cli/main.ts`, ...args],
    cwd: opts.cwd ?? REPO,
    stdout: "piped",
    stderr: "piped",
    env: { DENO_NO_UPDATE_CHECK: "1", NO_COLOR: "1", ...opts.env },
  });
}

/** Runs `spindrift <args>` to its end. */
export async function runCli(
  args: string[],
  opts: { cwd?: string } = {},
): Promise<{ code: number; stdout: string; stderr: string }> {
  const out = await cli(args, opts).output();
  const dec = new TextDecoder();
  return { code: out.code, stdout: dec.decode(out.stdout), stderr: dec.decode(out.stderr) };
}

export function assertNoStackTrace(text: string): void {
  assert(!/\n\s+at .+:\d+:\d+/.test(text), `a stack trace was printed:\n${text}`);
}
