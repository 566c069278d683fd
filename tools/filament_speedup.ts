/**
 * Filament engine speed against an earlier build, in one script: checks out REV into a temporary git worktree,
 * installs its tools there (`./spindrift --help`), runs `engines/filament/time_bench.ts` (copied from this
 * checkout) on the same ring tangle with that build's RK4 + Barnes–Hut tree and with this checkout's defaults,
 * and prints CPU time per simulated time and the ratio. Not part of the test suite.
 *
 *   deno run -A tools/filament_speedup.ts [points] [duration] [REV]
 *   (defaults 20000, 0.05, 32b5d4c — the last build whose filament engine was RK4 + Barnes–Hut, version 1.x)
 *
 * CPU seconds are per process (user + system), so a busy machine inflates both runs alike only roughly:
 * run it on a quiet machine for figures you quote.
 */
import process from "node:process";

const points = Deno.args[0] ?? "20000";
const duration = Deno.args[1] ?? "0.05";
const rev = Deno.args[2] ?? "32b5d4c";
const here = new URL("..", import.meta.url).pathname;

async function sh(cwd: string, cmd: string[], quiet = false): Promise<string> {
  const out = await new Deno.Command(cmd[0], { args: cmd.slice(1), cwd, stdout: "piped", stderr: "piped" })
    .output();
  const text = new TextDecoder().decode(out.stdout);
  if (!out.success) {
    throw new Error(`${cmd.join(" ")} failed in ${cwd}:\n${new TextDecoder().decode(out.stderr)}`);
  }
  if (!quiet) console.error(text.trim());
  return text;
}

const deno = process.execPath;
const tmp = await Deno.makeTempDir({ prefix: "spindrift-speedup-" });
const old = `${tmp}/build`;
try {
  await sh(here, ["git", "worktree", "add", "--detach", old, rev], true);
  console.error(`installing ${rev} in ${old} …`);
  await sh(old, ["./spindrift", "--help"], true);
  await Deno.copyFile(`${here}/engines/filament/time_bench.ts`, `${old}/engines/filament/time_bench.ts`);
  const run = async (root: string, summation: string) =>
    JSON.parse(
      await sh(
        root,
        [deno, "run", "-A", "engines/filament/time_bench.ts", points, duration, summation],
        true,
      ),
    );
  const before = await run(old, "tree");
  const after = await run(here, "fmm");
  const rate = (r: { cpuSeconds: number; t: number }) => r.cpuSeconds / r.t;
  console.log(`Simulated time ${duration} of one ring tangle (≈ ${points} points), CPU seconds:`);
  console.log(`build | points | steps | CPU s | CPU s per unit time | reconnections`);
  for (const [name, r] of [[`${rev} (RK4 + tree θ 0.4)`, before], ["this checkout (defaults)", after]]) {
    console.log(
      `${name} | ${r.points} | ${r.steps} | ${r.cpuSeconds} | ${rate(r).toFixed(0)} | ${r.reconnections}`,
    );
  }
  console.log(`speed-up: ${(rate(before) / rate(after)).toFixed(1)}× less CPU time per simulated time`);
} finally {
  await sh(here, ["git", "worktree", "remove", "--force", old], true).catch(() => {});
  await Deno.remove(tmp, { recursive: true }).catch(() => {});
}
