/** Small formatting helpers of the credibility commands: durations, Slurm time limits and memory requests. */

/** "45 s", "12 min", "3.4 h", "2.1 days". */
export function formatDuration(s: number): string {
  if (!Number.isFinite(s)) return "unknown";
  if (s < 10) return `${Number(s.toPrecision(2))} s`;
  if (s < 90) return `${Math.round(s)} s`;
  if (s < 5400) return `${Math.round(s / 60)} min`;
  if (s < 48 * 3600) return `${(s / 3600).toFixed(1)} h`;
  return `${(s / 86400).toFixed(1)} days`;
}

/** A Slurm time limit: D-HH:MM:SS or HH:MM:SS, rounded up to whole minutes. */
export function slurmTime(seconds: number): string {
  const m = Math.max(1, Math.ceil(seconds / 60));
  const d = Math.floor(m / 1440), h = Math.floor((m % 1440) / 60), mm = m % 60;
  const hms = `${String(h).padStart(2, "0")}:${String(mm).padStart(2, "0")}:00`;
  return d > 0 ? `${d}-${hms}` : hms;
}

/** A Slurm memory request rounded up to 100 MiB ("300M") or to 0.5 GiB from 2 GiB on ("2.5G"). */
export function slurmMemory(bytes: number): string {
  const mib = bytes / (1024 * 1024);
  if (mib < 2048) return `${Math.max(100, Math.ceil(mib / 100) * 100)}M`;
  return `${Math.ceil(mib / 512) / 2}G`;
}
