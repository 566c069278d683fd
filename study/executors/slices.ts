/**
 * Cutting the realisations to run into slices, one slice per array task.
 *
 * Rule: a given slice size is used as is; otherwise one realisation per task (the right choice for long
 * realisations: the most parallelism, and a task killed at its time limit loses one realisation), growing only
 * as needed to stay within `maxTasks` array tasks (Slurm's default MaxArraySize is 1001, indices 0…1000).
 * Slices keep plan order (point-major), so a slice holds neighbouring realisations of one point where possible.
 *
 * @example
 * ```ts
 * chooseSliceSize(2500, {}); // 3  (834 tasks)
 * sliceList([a, b, c, d, e], 2); // [[a, b], [c, d], [e]]
 * ```
 */

/** Default upper bound on the number of array tasks of one submission. */
export const DEFAULT_MAX_TASKS = 1000;

/** Realisations per array task for `count` realisations to run. */
export function chooseSliceSize(
  count: number,
  opts: { readonly sliceSize?: number; readonly maxTasks?: number } = {},
): number {
  if (opts.sliceSize !== undefined) return opts.sliceSize;
  const maxTasks = opts.maxTasks ?? DEFAULT_MAX_TASKS;
  return Math.max(1, Math.ceil(count / maxTasks));
}

/** Consecutive slices of `size` items (the last one may be shorter); none for no items. */
export function sliceList<T>(items: readonly T[], size: number): T[][] {
  if (!Number.isInteger(size) || size < 1) {
    throw new RangeError(`slice size must be an integer ≥ 1, got ${size}`);
  }
  const out: T[][] = [];
  for (let i = 0; i < items.length; i += size) out.push(items.slice(i, i + size));
  return out;
}
