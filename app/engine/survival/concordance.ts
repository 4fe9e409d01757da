/**
 * Harrell's concordance of a Cox model as R's survival package reports it for a fit: over
 * comparable pairs within a stratum (an event at t_i and a row still at risk after it: a later
 * time, or censored at t_i), the share in which the row with the event has the higher risk
 * score, ties in the score counting one half; pairs weighted by the product of case weights.
 * Pairs of events at the same time are not comparable. Harrell et al. (1982); Therneau and
 * Watson (2015).
 */
export function concordance(
  score: ArrayLike<number>,
  time: ArrayLike<number>,
  status: ArrayLike<number>,
  stratum: ArrayLike<number>,
  weight: ArrayLike<number>,
): number {
  const n = time.length;
  // rows by stratum and time; each event compared with the rows after its block
  const idx = Array.from({ length: n }, (_, i) => i).sort((a, b) => stratum[a] - stratum[b] || time[a] - time[b]);
  let concordant = 0;
  let discordant = 0;
  let tied = 0;
  for (let s = 0; s < n; ) {
    let e = s + 1;
    while (e < n && stratum[idx[e]] === stratum[idx[s]] && time[idx[e]] === time[idx[s]]) e++;
    let end = e;
    while (end < n && stratum[idx[end]] === stratum[idx[s]]) end++;
    for (let q = s; q < e; q++) {
      const i = idx[q];
      if (status[i] !== 1) continue;
      const compare = (j: number) => {
        const w = weight[i] * weight[j];
        if (score[i] > score[j]) concordant += w;
        else if (score[i] < score[j]) discordant += w;
        else tied += w;
      };
      for (let r = s; r < e; r++) if (status[idx[r]] === 0) compare(idx[r]);
      for (let r = e; r < end; r++) compare(idx[r]);
    }
    s = e;
  }
  return (concordant + tied / 2) / (concordant + discordant + tied);
}
