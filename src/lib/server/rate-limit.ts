import { TooManyRequests } from './errors.ts';

/**
 * A fixed-window counter kept in memory: enough for one web process guarding sign-in.
 * `hit` throws TooManyRequests once `limit` attempts fall in the window.
 */
export class RateLimiter {
  private readonly hits = new Map<string, { count: number; resetAt: number }>();
  constructor(
    private readonly limit: number,
    private readonly windowMs: number,
  ) {}

  hit(key: string, now = Date.now()): void {
    const entry = this.hits.get(key);
    if (!entry || entry.resetAt <= now) {
      this.hits.set(key, { count: 1, resetAt: now + this.windowMs });
      if (this.hits.size > 10_000) this.sweep(now);
      return;
    }
    entry.count += 1;
    if (entry.count > this.limit) {
      throw new TooManyRequests('Too many sign-in attempts. Wait a few minutes and try again.', Math.ceil((entry.resetAt - now) / 1000));
    }
  }

  private sweep(now: number) {
    for (const [k, v] of this.hits) if (v.resetAt <= now) this.hits.delete(k);
  }
}
