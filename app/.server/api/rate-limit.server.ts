/**
 * Rate limit per API token: a token bucket of 60 requests that refills at one request per
 * second, kept in this process's memory.
 *
 * Why in memory and not in the database: counting in the database would add a write to every
 * API request, and every write in a process goes through one queue (`writeTransaction`),
 * where it would wait behind reruns and uploads. The cost of the in-memory choice: with
 * several app instances behind a load balancer each instance keeps its own buckets, so a
 * token may make up to 60 requests a minute on each instance. Size the limit with that in
 * mind, or pin API clients to one instance.
 */

export const REQUESTS_PER_MINUTE = 60;

interface Bucket {
  tokens: number;
  updatedAt: number;
}

export interface RateDecision {
  allowed: boolean;
  limit: number;
  /** Requests left in the bucket after this one. */
  remaining: number;
  /** Seconds until the next request would be allowed (0 when allowed). */
  retryAfter: number;
}

export class TokenBuckets {
  private readonly buckets = new Map<string, Bucket>();
  private readonly refillPerMs: number;

  constructor(
    private readonly capacity = REQUESTS_PER_MINUTE,
    perMinute = REQUESTS_PER_MINUTE,
    private readonly clock: () => number = Date.now,
  ) {
    this.refillPerMs = perMinute / 60_000;
  }

  /** Takes one request from the key's bucket if there is one to take. */
  take(key: string): RateDecision {
    const now = this.clock();
    const b = this.buckets.get(key) ?? { tokens: this.capacity, updatedAt: now };
    b.tokens = Math.min(this.capacity, b.tokens + (now - b.updatedAt) * this.refillPerMs);
    b.updatedAt = now;
    this.buckets.set(key, b);
    this.sweep(now);
    if (b.tokens >= 1) {
      b.tokens -= 1;
      return { allowed: true, limit: this.capacity, remaining: Math.floor(b.tokens), retryAfter: 0 };
    }
    return {
      allowed: false,
      limit: this.capacity,
      remaining: 0,
      retryAfter: Math.max(1, Math.ceil((1 - b.tokens) / this.refillPerMs / 1000)),
    };
  }

  /** What `take` would decide now, without taking anything. */
  peek(key: string): RateDecision {
    const now = this.clock();
    const b = this.buckets.get(key);
    const tokens = b
      ? Math.min(this.capacity, b.tokens + (now - b.updatedAt) * this.refillPerMs)
      : this.capacity;
    if (tokens >= 1)
      return { allowed: true, limit: this.capacity, remaining: Math.floor(tokens), retryAfter: 0 };
    return {
      allowed: false,
      limit: this.capacity,
      remaining: 0,
      retryAfter: Math.max(1, Math.ceil((1 - tokens) / this.refillPerMs / 1000)),
    };
  }

  /** Forgets buckets that have refilled completely: they behave exactly like a new one. */
  private sweep(now: number): void {
    if (this.buckets.size < 1000) return;
    for (const [k, b] of this.buckets) {
      if (b.tokens + (now - b.updatedAt) * this.refillPerMs >= this.capacity) this.buckets.delete(k);
    }
  }
}

/** This process's buckets, one per API token. */
export const apiRateLimit = new TokenBuckets();

/**
 * Failed token attempts, throttled so that nobody can try token after token: each token
 * prefix (the marker and the first eight characters, what people see of a token) may fail
 * `FAILED_ATTEMPTS_PER_MINUTE` times a minute, and all failures together
 * `FAILED_ATTEMPTS_ALL_PER_MINUTE` times; beyond that, answers are 429 with Retry-After. A
 * prefix that is over its limit is refused before its token is even looked up. The
 * application server does not see the client's network address (React Router's request
 * carries none, and a forwarded-for header can be forged), so failures are counted by
 * what the request presents, not by where it comes from.
 */
export const FAILED_ATTEMPTS_PER_MINUTE = 10;
export const FAILED_ATTEMPTS_ALL_PER_MINUTE = 300;
export const failedTokenAttempts = {
  byPrefix: new TokenBuckets(FAILED_ATTEMPTS_PER_MINUTE, FAILED_ATTEMPTS_PER_MINUTE),
  all: new TokenBuckets(FAILED_ATTEMPTS_ALL_PER_MINUTE, FAILED_ATTEMPTS_ALL_PER_MINUTE),
};
