/**
 * The seeded generator that reproducible results depend on: mulberry32 (Tommy Ettinger, public
 * domain). 32-bit integer arithmetic only, so the stream of uniforms on [0, 1) is identical on
 * every platform and engine, unlike Math.random. Used by the quantile residuals, the demo data
 * and the appendix's fixed random ids.
 */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
