/**
 * The API's pure parts: the per-token rate limit (a token bucket of 60 that refills one a
 * second) and the subject-identifier redaction used for readers without subject-level access.
 */
import { describe, expect, it } from "vitest";
import { TokenBuckets } from "~/.server/api/rate-limit.server";

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
