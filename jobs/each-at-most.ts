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
