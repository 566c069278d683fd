/**
 * Progress of a run: a live bar on a terminal (done/total, failures, ETA), plain periodic lines otherwise
 * (log files, batch jobs). Writes to stderr so stdout stays clean for results.
 */
import cliProgress from "cli-progress";
import process from "node:process";

export interface Progress {
  start(total: number, alreadyDone: number): void;
  update(done: number, failed: number): void;
  stop(): void;
}

function formatSeconds(s: number): string {
  if (!Number.isFinite(s)) return "?";
  if (s < 90) return `${Math.round(s)} s`;
  if (s < 5400) return `${Math.round(s / 60)} min`;
  return `${(s / 3600).toFixed(1)} h`;
}

/** A progress reporter suited to stderr: a bar on a terminal, a line every `intervalSeconds` otherwise. */
export function createProgress(opts: { quiet?: boolean; intervalSeconds?: number } = {}): Progress {
  if (opts.quiet) return { start() {}, update() {}, stop() {} };
  if (Deno.stderr.isTerminal()) return terminalProgress();
  return plainProgress(opts.intervalSeconds ?? 10);
}

function terminalProgress(): Progress {
  const bar = new cliProgress.SingleBar({
    format: "  {bar} {value}/{total} realisations | failed {failed} | elapsed {elapsedh} | ETA {etah}",
    stream: process.stderr,
    hideCursor: true,
    clearOnComplete: false,
  }, cliProgress.Presets.shades_classic);
  let t0 = 0;
  let total = 0;
  let base = 0;
  return {
    start(n, alreadyDone) {
      total = n;
      base = alreadyDone;
      t0 = performance.now();
      bar.start(n, alreadyDone, { failed: 0, elapsedh: "0 s", etah: "?" });
    },
    update(done, failed) {
      const elapsed = (performance.now() - t0) / 1000;
      const rate = (done - base) / elapsed;
      const eta = rate > 0 ? (total - done) / rate : Number.NaN;
      bar.update(done, { failed, elapsedh: formatSeconds(elapsed), etah: formatSeconds(eta) });
    },
    stop() {
      bar.stop();
    },
  };
}

function plainProgress(intervalSeconds: number): Progress {
  let t0 = 0;
  let last = 0;
  let total = 0;
  let base = 0;
  let state = { done: 0, failed: 0 };
  const line = () => {
    const elapsed = (performance.now() - t0) / 1000;
    const rate = (state.done - base) / elapsed;
    const eta = rate > 0 ? (total - state.done) / rate : Number.NaN;
    console.error(
      `progress: ${state.done}/${total} realisations, ${state.failed} failed, elapsed ${
        formatSeconds(elapsed)
      }, ` +
        `ETA ${formatSeconds(eta)}`,
    );
  };
  return {
    start(n, alreadyDone) {
      total = n;
      base = alreadyDone;
      state = { done: alreadyDone, failed: 0 };
      t0 = performance.now();
      last = t0;
    },
    update(done, failed) {
      state = { done, failed };
      const now = performance.now();
      if (now - last >= intervalSeconds * 1000) {
        last = now;
        line();
      }
    },
    stop() {
      line();
    },
  };
}
