/**
 * The canonical JSON serializer against its definition: `JSON.stringify` with a replacer that
 * answers every non-array object as `Object.fromEntries` of its entries sorted by key. Stored
 * result hashes, signatures and audit events name these bytes, so the faster serializer must give
 * exactly the same text for every value, including the awkward ones below.
 */
import { describe, expect, it } from "vitest";
import { canonicalJson } from "~/.server/canonical-json";
import { computeRerun } from "~/.server/reruns/compute-rerun";
import { plannedSensitivityOptions } from "~/.server/reruns/planned-sensitivity";
import { inventedTrial, META, MODEL } from "../../scripts/bench-rerun-compute";

function byDefinition(value: unknown): string {
  return JSON.stringify(value, (_key, v: unknown) => {
    if (v && typeof v === "object" && !Array.isArray(v)) {
      return Object.fromEntries(
        Object.entries(v as Record<string, unknown>).sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)),
      );
    }
    return v;
  });
}

describe("canonicalJson", () => {
  it("gives the same text as its definition for awkward values", () => {
    const holey = [1, , 3]; // eslint-disable-line no-sparse-arrays
    const withProto = JSON.parse('{"__proto__": {"b": 1, "a": 2}, "x": 1}');
    const values: unknown[] = [
      null,
      undefined,
      0,
      -0,
      NaN,
      Infinity,
      'text with "quotes", \u2028 and é',
      true,
      [],
      {},
      { b: 1, a: [2, { z: 1, y: 2, x: undefined }], c: null, f: () => 1 },
      { 10: "ten", 9: "nine", b: 1, a: 2, "01": 3, "4294967295": 4 },
      [NaN, -Infinity, -0, 1e21, 1e-7, 0.1 + 0.2, undefined, () => 1, Symbol("s")],
      holey,
      [[1, 2], [{ b: 1, a: 2 }, 3], holey],
      new Float64Array([0.5, NaN, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12]),
      {
        when: new Date(Date.UTC(2026, 0, 2, 3, 4, 5)),
        nested: { toJSON: (k: string) => ({ k, z: 1, a: 2 }) },
      },
      [{ toJSON: (k: string) => k }, { toJSON: () => [{ b: 1, a: 2 }] }],
      withProto,
      new Map([["a", 1]]),
      Object.assign(Object.create(null), { b: 1, a: 2 }),
    ];
    for (const v of values) expect(canonicalJson(v)).toBe(byDefinition(v));
  });

  it("gives the same text as its definition for a rerun's document and its sensitivity analyses", () => {
    const table = inventedTrial(300);
    const primary = computeRerun(MODEL, table, { variant: "planned" }, META);
    expect(canonicalJson(primary)).toBe(byDefinition(primary));
    for (const options of plannedSensitivityOptions(MODEL, primary)) {
      const doc = computeRerun(MODEL, table, options, META);
      expect(canonicalJson(doc)).toBe(byDefinition(doc));
    }
  });
});

describe("encodeResult", () => {
  it("stores the UTF-8 bytes of the canonical JSON and their SHA-256, ASCII or not", async () => {
    const { createHash } = await import("node:crypto");
    const { encodeResult } = await import("~/.server/reruns/result-files");
    for (const doc of [
      { b: "plain", a: [1.5, null] },
      { b: "Zoë, 東京, \u2028", a: ["\ud83d\ude00", "lone \ud800 surrogate"] },
    ]) {
      const json = canonicalJson(doc);
      const { bytes, sha256 } = encodeResult(doc);
      expect(bytes.equals(Buffer.from(json, "utf8"))).toBe(true);
      expect(sha256).toBe(createHash("sha256").update(json).digest("hex"));
    }
  });
});
