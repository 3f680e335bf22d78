/**
 * Waiting for a condition instead of sleeping: tests wait for what they need to have happened,
 * never for a fixed time.
 */
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/**
 * Polls `check` every 200 ms until it returns a value (or the time runs out). `seen`, when given,
 * says what was last observed, for the message of a timeout.
 */
export async function until<T>(what: string, check: () => Promise<T | undefined | null | false>, timeoutMs = 60_000, seen?: () => string): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  let lastErr: unknown;
  while (Date.now() < deadline) {
    try {
      const v = await check();
      if (v) return v;
    } catch (err) {
      lastErr = err;
    }
    await sleep(200);
  }
  const last = seen ? `; last seen: ${seen()}` : '';
  throw new Error(`${what} did not happen within ${timeoutMs / 1000} s${lastErr ? ` (last error: ${(lastErr as Error).message})` : ''}${last}`);
}
