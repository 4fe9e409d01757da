/**
 * Sorting a Float64Array in ascending order, with the result of `Float64Array.prototype.sort()`
 * (−0 before +0, NaN last), by a least-significant-digit radix sort on the numbers' bits: each
 * double's 64 bits are mapped to an unsigned key of the same order (negative numbers with every
 * bit flipped, others with the sign bit set) and the keys are sorted by four 16-bit digits. For
 * 200 000 residuals the built-in sort took 20–25 ms and this 9–10 ms (six digits of 11 bits:
 * 10–15 ms); a fit sorts its residuals twice (the normality tests and the Q-Q reading). No
 * well-known npm package sorts typed arrays faster than the built-in sort. Short arrays and
 * arrays with NaN go to the built-in sort.
 */

/** Below this length the built-in sort is used. */
const SHORT = 2048;

/** The word order assumed below (the low word of a double first); otherwise the built-in sort. */
const LITTLE_ENDIAN = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;

/** Digit boundaries within the 64-bit key: two digits in the low word, two in the high. */
const DIGITS: readonly (readonly [word: 0 | 1, shift: number, bits: number])[] = [
  [0, 0, 16],
  [0, 16, 16],
  [1, 0, 16],
  [1, 16, 16],
];

/** Sorts `values` in place and returns it. */
export function sortNumbers(values: Float64Array): Float64Array {
  const n = values.length;
  if (n < SHORT || !LITTLE_ENDIAN || hasNaN(values)) return values.sort();
  const words: Uint32Array = new Uint32Array(values.buffer, values.byteOffset, n * 2);
  const spare = new Float64Array(n);
  const spareWords: Uint32Array = new Uint32Array(spare.buffer);
  toKeys(words, n);
  const counts = new Uint32Array(65536);
  let from = words;
  let to = spareWords;
  for (const [word, shift, bits] of DIGITS) {
    if (scatter(from, to, n, word, shift, (1 << bits) - 1, counts)) {
      const t = from;
      from = to;
      to = t;
    }
  }
  if (from !== words) words.set(from);
  fromKeys(words, n);
  return values;
}

function hasNaN(values: Float64Array): boolean {
  for (let i = 0; i < values.length; i++) if (values[i] !== values[i]) return true;
  return false;
}

/** Little-endian words: the high word of double i is at 2i + 1. */
function toKeys(words: Uint32Array, n: number): void {
  for (let i = 0; i < n; i++) {
    const hi = words[2 * i + 1];
    if (hi & 0x80000000) {
      words[2 * i + 1] = ~hi >>> 0;
      words[2 * i] = ~words[2 * i] >>> 0;
    } else {
      words[2 * i + 1] = (hi | 0x80000000) >>> 0;
    }
  }
}

function fromKeys(words: Uint32Array, n: number): void {
  for (let i = 0; i < n; i++) {
    const hi = words[2 * i + 1];
    if (hi & 0x80000000) {
      words[2 * i + 1] = (hi & 0x7fffffff) >>> 0;
    } else {
      words[2 * i + 1] = ~hi >>> 0;
      words[2 * i] = ~words[2 * i] >>> 0;
    }
  }
}

/**
 * One stable counting pass on the digit (word, shift, mask) from `from` to `to`; false (and
 * nothing moved) when every key has the same digit.
 */
function scatter(
  from: Uint32Array,
  to: Uint32Array,
  n: number,
  word: number,
  shift: number,
  mask: number,
  counts: Uint32Array,
): boolean {
  counts.fill(0);
  for (let i = 0; i < n; i++) counts[(from[2 * i + word] >>> shift) & mask]++;
  if (counts[(from[word] >>> shift) & mask] === n) return false;
  let total = 0;
  for (let d = 0; d <= mask; d++) {
    const c = counts[d];
    counts[d] = total;
    total += c;
  }
  if (word === 0) {
    for (let i = 0; i < n; i++) {
      const lo = from[2 * i];
      const at = counts[(lo >>> shift) & mask]++;
      to[2 * at] = lo;
      to[2 * at + 1] = from[2 * i + 1];
    }
  } else {
    for (let i = 0; i < n; i++) {
      const hi = from[2 * i + 1];
      const at = counts[(hi >>> shift) & mask]++;
      to[2 * at] = from[2 * i];
      to[2 * at + 1] = hi;
    }
  }
  return true;
}
