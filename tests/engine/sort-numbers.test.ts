// The radix sort of the residuals against the ECMAScript definition of Float64Array.prototype.sort
// (ascending numeric order, −0 before +0, NaN last), bit for bit, on lengths either side of the
// length where the radix sort takes over.
import { describe, expect, it } from "vitest";
import { sortNumbers } from "~/engine/sort-numbers";

function stream(seed: number): () => number {
  let s = seed >>> 0 || 1;
  return () => {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return (s + 0.5) / 4294967296;
  };
}

const SPECIALS = [0, -0, Infinity, -Infinity, 5e-324, -5e-324, 1e308, -1e308, 1, -1];

function sameBits(a: Float64Array, b: Float64Array): boolean {
  const x = new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
  const y = new Uint8Array(b.buffer, b.byteOffset, b.byteLength);
  return x.length === y.length && x.every((v, i) => v === y[i]);
}

describe("sortNumbers", () => {
  const u = stream(20261205);
  const cases: [string, (n: number) => Float64Array][] = [
    ["uniform", (n) => Float64Array.from({ length: n }, () => (u() - 0.5) * 10)],
    [
      "signed zeros, infinities, subnormals",
      (n) => Float64Array.from({ length: n }, (_, i) => SPECIALS[i % 10] * (i % 3 === 0 ? 1 : u())),
    ],
    ["ties", (n) => Float64Array.from({ length: n }, () => Math.round(u() * 5) - 2)],
    ["constant", (n) => new Float64Array(n).fill(2.5)],
    ["with NaN", (n) => Float64Array.from({ length: n }, () => (u() < 0.01 ? NaN : u()))],
    [
      "wide exponents",
      (n) => Float64Array.from({ length: n }, () => (u() < 0.5 ? -1 : 1) * Math.exp(u() * 1400 - 700)),
    ],
  ];
  for (const n of [0, 1, 7, 2047, 2048, 5001, 70_000]) {
    for (const [label, make] of cases) {
      it(`${label}, n = ${n}`, () => {
        const values = make(n);
        const expected = new Float64Array(values).sort();
        expect(sameBits(sortNumbers(values), expected)).toBe(true);
      });
    }
  }
});
