/**
 * Harrell's concordance of a Cox model as R's survival package reports it for a fit: over
 * comparable pairs within a stratum (an event at t_i and a row still at risk after it: a later
 * time, or censored at t_i), the share in which the row with the event has the higher risk
 * score, ties in the score counting one half; pairs weighted by the product of case weights.
 * Pairs of events at the same time are not comparable. Harrell et al. (1982); Therneau and
 * Watson (2015). O(n log n): the rows at risk are kept in a Fenwick tree over the score ranks.
 */
export function concordance(
  score: ArrayLike<number>,
  time: ArrayLike<number>,
  status: ArrayLike<number>,
  stratum: ArrayLike<number>,
  weight: ArrayLike<number>,
): number {
  const n = time.length;
  const byScore = Array.from({ length: n }, (_, i) => i).sort((a, b) => score[a] - score[b]);
  const rank = new Int32Array(n);
  let m = 0;
  for (let q = 0; q < n; q++) {
    if (q > 0 && score[byScore[q]] !== score[byScore[q - 1]]) m++;
    rank[byScore[q]] = m;
  }
  const size = m + 1;
  const tree = new Float64Array(size + 1);
  const add = (r: number, w: number) => {
    for (let k = r + 1; k <= size; k += k & -k) tree[k] += w;
  };
  /** Total weight of ranks 0..r−1. */
  const below = (r: number) => {
    let s = 0;
    for (let k = r; k > 0; k -= k & -k) s += tree[k];
    return s;
  };

  const idx = Array.from({ length: n }, (_, i) => i).sort(
    (a, b) => stratum[a] - stratum[b] || time[b] - time[a],
  );
  let concordant = 0;
  let discordant = 0;
  let tied = 0;
  let inserted: number[] = [];
  let total = 0;
  for (let s = 0; s < n;) {
    if (s === 0 || stratum[idx[s]] !== stratum[idx[s - 1]]) {
      for (const i of inserted) add(rank[i], -weight[i]);
      inserted = [];
      total = 0;
    }
    let e = s + 1;
    while (e < n && stratum[idx[e]] === stratum[idx[s]] && time[idx[e]] === time[idx[s]]) e++;
    // censored rows at this time are at risk for this time's events
    for (let q = s; q < e; q++) {
      const i = idx[q];
      if (status[i] === 0) {
        add(rank[i], weight[i]);
        inserted.push(i);
        total += weight[i];
      }
    }
    for (let q = s; q < e; q++) {
      const i = idx[q];
      if (status[i] !== 1) continue;
      const lower = below(rank[i]);
      const upTo = below(rank[i] + 1);
      concordant += weight[i] * lower;
      tied += weight[i] * (upTo - lower);
      discordant += weight[i] * (total - upTo);
    }
    for (let q = s; q < e; q++) {
      const i = idx[q];
      if (status[i] === 1) {
        add(rank[i], weight[i]);
        inserted.push(i);
        total += weight[i];
      }
    }
    s = e;
  }
  return (concordant + tied / 2) / (concordant + discordant + tied);
}
