/** Number formats for results tables: fixed decimals, p-values with a floor, a true minus sign. */
export function fmt(x: number | null | undefined, digits = 3): string {
  if (x === null || x === undefined || !Number.isFinite(x)) return "—";
  const a = Math.abs(x);
  const s = a !== 0 && (a < 1e-4 || a >= 1e6) ? x.toExponential(2) : x.toFixed(digits);
  return s.replace(/^-/, "−");
}

export function fmtP(p: number | null | undefined): string {
  if (p === null || p === undefined || !Number.isFinite(p)) return "—";
  return p < 0.0001 ? "<0.0001" : p.toFixed(4);
}

export function fmtCi(lower: number, upper: number, digits = 3): string {
  return `${fmt(lower, digits)} to ${fmt(upper, digits)}`;
}

export const utc = (iso: string | null | undefined): string =>
  iso ? `${iso.slice(0, 16).replace("T", " ")} UTC` : "—";
