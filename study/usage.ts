/**
 * What one realisation costs in its worker thread: CPU time from Linux's per-thread accounting
 * (`/proc/thread-self/stat`, fields utime + stime in clock ticks of 1/100 s; proc(5)) and the peak memory of the
 * worker's isolate (JavaScript heap plus the typed-array buffers it holds, `Deno.memoryUsage()`), sampled at
 * every frame batch and at the end. Elsewhere (no /proc) CPU time is null and the caller uses wall time.
 *
 * @example
 * ```ts
 * const meter = new UsageMeter();
 * // … compute, calling meter.sample() now and then …
 * const { cpuSeconds, peakBytes } = meter.finish();
 * ```
 */
import type { ResourceUsage } from "../store/db.ts";

/** Clock ticks per second of /proc's times (USER_HZ; 100 on Linux for user space). */
const TICKS = 100;

/** CPU time (s) of the calling thread, or null where it cannot be read. */
export function threadCpuSeconds(): number | null {
  try {
    const s = Deno.readTextFileSync("/proc/thread-self/stat");
    // Fields after the command name in parentheses: state is field 3; utime and stime are 14 and 15.
    const f = s.slice(s.lastIndexOf(")") + 2).split(" ");
    const ticks = Number(f[11]) + Number(f[12]);
    return Number.isFinite(ticks) ? ticks / TICKS : null;
  } catch {
    return null;
  }
}

function memoryNow(): number {
  try {
    const m = Deno.memoryUsage();
    return m.heapUsed + m.external;
  } catch {
    return 0;
  }
}

/** Measures one realisation (see the module comment). */
export class UsageMeter {
  readonly #cpu0 = threadCpuSeconds();
  #peak = memoryNow();

  /** Records the memory in use now. */
  sample(): void {
    const m = memoryNow();
    if (m > this.#peak) this.#peak = m;
  }

  finish(): ResourceUsage {
    this.sample();
    const cpu = threadCpuSeconds();
    return {
      cpuSeconds: this.#cpu0 !== null && cpu !== null ? cpu - this.#cpu0 : null,
      peakBytes: this.#peak,
    };
  }
}
