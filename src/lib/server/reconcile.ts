/**
 * Reconciles storage with the database: an upload cut short by a database outage can leave a
 * write-once original on disk whose row was never written (the file is linked, then the row is
 * inserted). Such a file is never deleted or moved (its bytes are someone's scan); it is put on
 * the "recovered" list, a note per file under `recovered/originals/`, carried by backups, and
 * logged, so it is never silently left. Uploading the same scan again gives it its row; the next
 * reconcile then takes it off the list. The worker runs this at start and every few minutes.
 */
import { QueryTypes } from 'sequelize';
import { db } from '../../../db/index.ts';
import { config } from './config.ts';
import { storage } from './storage.ts';

export const RECOVERED_PREFIX = 'recovered/originals';

/** One original on the recovered list, as its note records it. */
export interface RecoveredOriginal {
  storageKey: string;
  sha256: string;
  bytes: number;
  foundAt: string;
  note: string;
}

const noteKey = (sha256: string) => `${RECOVERED_PREFIX}/${sha256}.json`;
const shaOf = (key: string) => /([0-9a-f]{64})[^/]*$/.exec(key)?.[1] ?? null;

/**
 * Lists originals no row names (older than `olderThanMs`: an upload in progress links its file and
 * writes the row a moment later) and notes them; takes notes off for files that have a row now.
 * Returns the keys newly listed and those taken off.
 */
export async function reconcileOriginals(olderThanMs = config().staleUploadMs, now = Date.now()): Promise<{ listed: string[]; claimed: string[] }> {
  const store = storage();
  const named = new Set((await db().query<{ key: string }>('SELECT DISTINCT storage_key AS key FROM originals', { type: QueryTypes.SELECT })).map((r) => r.key));
  const listed: string[] = [];
  const claimed: string[] = [];
  const noted = new Map<string, string>();
  for (const key of await store.list(RECOVERED_PREFIX)) {
    if (!key.endsWith('.json')) continue;
    const note = JSON.parse((await store.readBuffer(key)).toString('utf8')) as RecoveredOriginal;
    noted.set(note.storageKey, key);
  }
  for (const key of await store.list('originals')) {
    if (named.has(key)) continue;
    const sha256 = shaOf(key);
    const st = await store.stat(key);
    if (!sha256 || !st || now - st.modified.getTime() < olderThanMs || noted.has(key)) continue;
    const note: RecoveredOriginal = {
      storageKey: key,
      sha256,
      bytes: st.bytes,
      foundAt: new Date(now).toISOString(),
      note: 'No database row names this original: its upload was most likely cut short by a database outage. Upload the scan again to add it to a batch.',
    };
    await store.put(noteKey(sha256), Buffer.from(JSON.stringify(note, null, 2) + '\n'));
    listed.push(key);
    console.warn(`reconcile: the original ${key} (${st.bytes} bytes) has no row in the database; kept, and put on the recovered list (${noteKey(sha256)})`);
  }
  for (const [key, note] of noted) {
    if (!named.has(key) && (await store.exists(key))) continue;
    await store.remove(note);
    claimed.push(key);
    console.log(`reconcile: the original ${key} has its row again (uploaded anew); taken off the recovered list`);
  }
  return { listed, claimed };
}
