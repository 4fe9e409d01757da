/**
 * The API's pure parts: the per-token rate limit (a token bucket of 60 that refills one a
 * second) and the subject-identifier redaction used for readers without subject-level access.
 */
import { describe, expect, it } from "vitest";
import { TokenBuckets } from "~/.server/api/rate-limit.server";
import { subjectRedactor } from "~/.server/api/redact";
import type { RerunDocument } from "~/.server/reruns/reruns.server";

describe("token bucket", () => {
  it("allows 60 at once, refuses the 61st with the seconds to wait, refills one a second, and keeps tokens apart", () => {
    let now = 1_000_000;
    const b = new TokenBuckets(60, 60, () => now);
    for (let i = 0; i < 60; i++) expect(b.take("a").allowed).toBe(true);
    const refused = b.take("a");
    expect(refused).toMatchObject({ allowed: false, remaining: 0 });
    expect(refused.retryAfter).toBe(1);
    expect(b.take("b").allowed).toBe(true);
    now += 1000;
    expect(b.take("a").allowed).toBe(true);
    expect(b.take("a").allowed).toBe(false);
    now += 120_000;
    expect(b.take("a").remaining).toBe(59); // never more than the capacity
  });
});

function docWith(ids: string[], flagged: { id: string; row: number; rank: number }[]): RerunDocument {
  return {
    result: { observations: { id: ids, row: ids.map((_, i) => i + 1) } },
    checks: [{ key: "cooks_distance", flagged: flagged.map((f) => ({ ...f, value: 1 })) }],
  } as unknown as RerunDocument;
}

describe("subject redaction", () => {
  const doc = docWith(["QMT301-0217", "QMT301-0021", "QMT301-0002"], [{ id: "QMT301-0217", row: 1, rank: 1 }, { id: "QMT301-0021", row: 2, rank: 2 }]);
  const r = subjectRedactor([doc]);

  it("names flagged subjects by rank within their check and others as a subject", () => {
    expect(r.text("largest Cook's distance 0.322 (subject QMT301-0217)", "cooks_distance")).toBe("largest Cook's distance 0.322 (the subject ranked 1)");
    expect(r.text("2 of 300 subjects exceed the threshold; the most extreme is subject QMT301-0021.", "cooks_distance")).toBe("2 of 300 subjects exceed the threshold; the most extreme is the subject ranked 2.");
    expect(r.text("largest leverage 0.1 (subject QMT301-0002)", "leverage")).toBe("largest leverage 0.1 (a subject)");
    expect(r.text("the most extreme is row 7.", "leverage")).toBe("the most extreme is a subject.");
  });

  it("takes bare identifiers out of free text and finds any that remain", () => {
    expect(r.text("QMT301-0217 had a data entry query; QMT301-02170 is no subject of this rerun")).toBe("a subject had a data entry query; QMT301-02170 is no subject of this rerun");
    expect(r.leak({ a: ["fine", { b: "see QMT301-0002" }] })).toBe("see QMT301-0002");
    expect(r.leak({ a: "nothing here", n: 217 })).toBeNull();
  });
});
