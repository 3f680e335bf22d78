/** Small copies made by the jobs themselves, from the engine's previews rather than from the full pixels. */
import sharp from 'sharp';
import { THUMBNAIL_SIDE } from '../src/lib/server/processing.ts';

/**
 * A thumbnail from a preview JPEG: JPEG shrink-on-load makes this a few milliseconds, against a
 * full-resolution resize per thumbnail when the engine makes them from the decoded scan.
 */
export function thumbnailFromPreview(preview: Buffer): Promise<Buffer> {
  return sharp(preview).resize({ width: THUMBNAIL_SIDE, height: THUMBNAIL_SIDE, fit: 'inside', withoutEnlargement: true }).jpeg({ quality: 82 }).toBuffer();
}

/** Runs `fn` over `items`, at most `limit` at a time. */
export async function eachAtMost<T>(items: T[], limit: number, fn: (item: T) => Promise<void>): Promise<void> {
  let next = 0;
  await Promise.all(
    Array.from({ length: Math.min(limit, items.length) }, async () => {
      while (next < items.length) await fn(items[next++]);
    }),
  );
}

/** A counting semaphore: at most `permits` holders of `run` at a time, the rest wait in order. */
export class Slots {
  private waiting: (() => void)[] = [];
  constructor(private free: number) {}
  async run<T>(fn: () => Promise<T>): Promise<T> {
    if (this.free > 0) this.free--;
    else await new Promise<void>((resolve) => this.waiting.push(resolve));
    try {
      return await fn();
    } finally {
      const next = this.waiting.shift();
      if (next) next();
      else this.free++;
    }
  }
}
