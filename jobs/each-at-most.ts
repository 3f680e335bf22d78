/** Small helpers of the jobs. */

/** Runs `fn` over `items`, at most `limit` at a time. */
export async function eachAtMost<T>(items: T[], limit: number, fn: (item: T) => Promise<void>): Promise<void> {
  let next = 0;
  await Promise.all(
    Array.from({ length: Math.min(limit, items.length) }, async () => {
      while (next < items.length) await fn(items[next++]);
    }),
  );
}

/** A call of `fn` that is skipped while the previous one still runs; failures are logged under `label`. */
export function oneAtATime(label: string, fn: () => Promise<unknown>): () => void {
  let running = false;
  return () => {
    if (running) return;
    running = true;
    fn()
      .catch((err) => console.error(`[${label}] failed:`, err))
      .finally(() => {
        running = false;
      });
  };
}
