/** The benchmarks' invented trials: three arms and deterministic standard normal draws. */
export const ARMS = ["Placebo", "Low dose", "High dose"] as const;

/** Deterministic standard normal draws (xorshift32 and Box–Muller). */
export function normalStream(seed: number): () => number {
  let s = seed >>> 0 || 1;
  const uniform = () => {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return (s + 0.5) / 4294967296;
  };
  return () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
}
