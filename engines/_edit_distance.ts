/**
 * Optimal-string-alignment edit distance (insertions, deletions, substitutions and swaps of neighbours each
 * cost 1), for "did you mean …" suggestions on short names. Shared by the study checker and the engines.
 *
 * Reference: F.J. Damerau, Commun. ACM 7, 171 (1964), doi:10.1145/363958.363994.
 */
export function editDistance(a: string, b: string): number {
  const m = a.length, n = b.length;
  let prev2 = new Array<number>(n + 1).fill(0);
  let prev = Array.from({ length: n + 1 }, (_, j) => j);
  for (let i = 1; i <= m; i++) {
    const cur = new Array<number>(n + 1);
    cur[0] = i;
    for (let j = 1; j <= n; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      let d = Math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + cost);
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) d = Math.min(d, prev2[j - 2] + 1);
      cur[j] = d;
    }
    prev2 = prev;
    prev = cur;
  }
  return prev[n];
}
