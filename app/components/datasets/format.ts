/** Number and size formats for the datasets pages (tabular figures come from the CSS). */
export function formatStat(x: number | undefined): string {
  if (x === undefined || !Number.isFinite(x)) return "–";
  if (Number.isInteger(x) && Math.abs(x) < 1e9) return String(x);
  const abs = Math.abs(x);
  if (abs !== 0 && (abs < 1e-3 || abs >= 1e7)) return x.toExponential(3);
  return x
    .toPrecision(5)
    .replace(/(\.\d*?)0+$/, "$1")
    .replace(/\.$/, "");
}

export function formatBytes(n: number): string {
  if (n >= 1_000_000) return `${(n / 1_000_000).toFixed(1)} MB`;
  if (n >= 1_000) return `${(n / 1_000).toFixed(1)} kB`;
  return `${n} bytes`;
}

export function formatCount(n: number): string {
  return n.toLocaleString("en-GB");
}

/** ISO time as "2026-12-02 14:05 UTC". */
export function formatTime(iso: string | null): string {
  if (!iso) return "–";
  return `${iso.slice(0, 10)} ${iso.slice(11, 16)} UTC`;
}
