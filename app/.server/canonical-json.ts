/**
 * JSON with object keys sorted at every depth: the same content always gives the same text.
 *
 * The text is exactly that of `JSON.stringify(value, replacer)` with a replacer answering every
 * non-array object as `Object.fromEntries` of its entries sorted by key (stored result hashes,
 * signatures and audit events name these bytes, so they must not change). A replacer makes
 * `JSON.stringify` call back into JavaScript for every value, hundreds of thousands of times for
 * a 10 000-subject rerun's per-subject arrays, and leaves its fast path; instead the value is
 * copied first with its objects rebuilt in that same key order (arrays of plain values are kept
 * as they are, or copied packed when they hold numbers: `packed`), and the copy is serialized
 * without a replacer. Both call `toJSON`
 * with the property's key before the object is sorted, and both put integer-like keys first in
 * ascending order (`Object.fromEntries` builds the object either way).
 */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(sortedCopy(value, ""));
}

const byCodeUnit = (a: [string, unknown], b: [string, unknown]) => (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0);

type WithToJson = { toJSON: (key: string) => unknown };

/**
 * Index of the first element that is an object (null is not), or −1. Two copies of one loop: one
 * sees the arrays that start with a number (per-subject values, the bulk of a result), the other
 * the rest, so that each element load stays specialized to the few array kinds it meets (one
 * loop for all of them ran six times slower, boxing every number it read).
 */
function firstObject(v: readonly unknown[]): number {
  return typeof v[0] === "number" ? firstObjectAfterNumber(v) : firstObjectOtherwise(v);
}

function firstObjectAfterNumber(v: readonly unknown[]): number {
  for (let i = 0; i < v.length; i++) {
    const e = v[i];
    if (typeof e !== "number" && e !== null && typeof e === "object") return i;
  }
  return -1;
}

function firstObjectOtherwise(v: readonly unknown[]): number {
  for (let i = 0; i < v.length; i++) {
    const e = v[i];
    if (e !== null && typeof e === "object") return i;
  }
  return -1;
}

/** Arrays of numbers at least this long are serialized from a packed copy (see `packed`). */
const PACK_FROM = 64;

/**
 * A copy of an array of plain values without holes in its storage. The per-subject arrays of a
 * result are made as `new Array(n)` and filled, which V8 keeps as "holey" arrays; its serializer
 * reads those one element at a time through the generic path, boxing every number, and a packed
 * copy serializes about 10% faster (4–8 ms of a 10 000-subject result's 45) for well under
 * 1 ms of copying. A hole reads as undefined, written as null either way: the same text.
 */
function packed(v: readonly unknown[]): unknown[] {
  const out: unknown[] = [];
  for (let i = 0; i < v.length; i++) out.push(v[i]);
  return out;
}

function sortedCopy(value: unknown, key: string): unknown {
  let v = value;
  if (v !== null && typeof v === "object" && typeof (v as Partial<WithToJson>).toJSON === "function")
    v = (v as WithToJson).toJSON(key);
  if (v === null || typeof v !== "object") return v;
  if (Array.isArray(v)) {
    // arrays pass through unchanged unless an element is an object to rebuild
    const first = firstObject(v);
    if (first < 0) return typeof v[0] === "number" && v.length >= PACK_FROM ? packed(v) : v;
    const copy = v.slice(0, first);
    for (let i = first; i < v.length; i++) {
      const e: unknown = v[i];
      copy.push(e !== null && typeof e === "object" ? sortedCopy(e, String(i)) : e);
    }
    return copy;
  }
  const keys = Object.keys(v).sort(); // code-unit order, as the comparator of the definition
  if (keys.includes("__proto__")) {
    // assignment would set the prototype: build it as the definition does
    const entries = Object.entries(v as Record<string, unknown>).sort(byCodeUnit);
    for (const entry of entries) entry[1] = sortedCopy(entry[1], entry[0]);
    return Object.fromEntries(entries);
  }
  const out: Record<string, unknown> = {};
  for (const k of keys) out[k] = sortedCopy((v as Record<string, unknown>)[k], k);
  return out;
}
