/**
 * Clears what a killed process leaves in storage: uploads staged under `incoming/` and
 * half-written files under `tmp/`. A live write touches its file with every chunk and a staged
 * scan is stored within seconds, so a file untouched for STALE_UPLOAD_MINUTES is an orphan.
 * Originals are never touched (the store refuses to remove them).
 */
import { config } from './config.ts';
import { storage } from './storage.ts';

const TEMPORARY_PREFIXES = ['incoming', 'tmp'];

/** Removes orphaned temporary files; returns how many. */
export async function removeStaleTemporaries(olderThanMs = config().staleUploadMs, now = Date.now()): Promise<number> {
  const store = storage();
  let removed = 0;
  for (const prefix of TEMPORARY_PREFIXES) {
    for (const key of await store.list(prefix)) {
      const st = await store.stat(key);
      if (st && now - st.modified.getTime() > olderThanMs) {
        await store.remove(key);
        removed++;
      }
    }
  }
  return removed;
}
