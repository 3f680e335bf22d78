/**
 * Steps shared by the fault tests: uploads that retry what a dying server dropped, the way the
 * upload page retries a failed file, and the checks that nothing was lost or stored twice.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Client, Reply } from '../../support/http.ts';
import type { IsolatedStack } from '../../support/isolated-stack.ts';
import { sha256, upload } from '../../support/scans.ts';

export { until } from '../../support/until.ts';

export interface UploadRecord {
  name: string;
  sha256: string;
  /** Every answer or network error, in order. */
  attempts: string[];
  final?: Reply;
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** What a test may follow of {@link uploadRetrying} while it runs. */
export interface UploadWatch {
  /** The number of files stored so far. */
  onStored?: (n: number) => void;
  /** An attempt failed on the network (refused, reset): the server is away. */
  onNetworkError?: () => void;
}

/**
 * Uploads every file `atOnce` at a time; a file whose request failed (connection refused or reset,
 * a 5xx) is sent again until the server answers 201 (added) or 200 (the same bytes already
 * stored: the earlier attempt got through before the answer was lost).
 */
export async function uploadRetrying(client: Client, batchId: string, files: { name: string; bytes: Buffer }[], atOnce: number, watch: UploadWatch = {}, deadlineMs = 150_000): Promise<UploadRecord[]> {
  const records: UploadRecord[] = files.map((f) => ({ name: f.name, sha256: sha256(f.bytes), attempts: [] }));
  const deadline = Date.now() + deadlineMs;
  let next = 0;
  let stored = 0;
  await Promise.all(
    Array.from({ length: atOnce }, async () => {
      while (next < files.length) {
        const i = next++;
        for (;;) {
          if (Date.now() > deadline) throw new Error(`${files[i].name} could not be uploaded in time: ${records[i].attempts.join(', ')}`);
          try {
            const r = await upload(client, batchId, files[i].name, files[i].bytes);
            records[i].attempts.push(String(r.status));
            if (r.status === 201 || r.status === 200) {
              records[i].final = r;
              break;
            }
            if (r.status < 500) throw new Error(`${files[i].name} was refused: ${r.status} ${r.text}`);
          } catch (err) {
            if (/was refused/.test(String((err as Error).message))) throw err;
            records[i].attempts.push(`network: ${String((err as Error & { cause?: { code?: string } }).cause?.code ?? (err as Error).message)}`);
            watch.onNetworkError?.();
          }
          await sleep(250);
        }
        watch.onStored?.(++stored);
      }
    }),
  );
  return records;
}

/** The messages the stack's mail fake caught (storage/outbox/*.json), oldest first. */
export function caughtMail(stack: IsolatedStack): { to: string[]; subject: string; text: string }[] {
  const dir = path.join(stack.storageDir, 'outbox');
  if (!fs.existsSync(dir)) return [];
  return fs
    .readdirSync(dir)
    .filter((f) => f.endsWith('.json'))
    .sort()
    .flatMap((f) => {
      try {
        return [JSON.parse(fs.readFileSync(path.join(dir, f), 'utf8'))];
      } catch {
        return []; // being written: seen on the next look
      }
    });
}

/** Files left in the store's temporary folders (half-written uploads and renders). */
export function temporaryFiles(stack: IsolatedStack): string[] {
  const out: string[] = [];
  for (const sub of ['tmp', 'incoming']) {
    const dir = path.join(stack.storageDir, sub);
    if (fs.existsSync(dir)) for (const f of fs.readdirSync(dir, { recursive: true }) as string[]) if (fs.statSync(path.join(dir, f)).isFile()) out.push(`${sub}/${f}`);
  }
  return out;
}

/** Every original of an archive: its row and the SHA-256 of its file as it is on disk now. */
export async function originalsOnDisk(stack: IsolatedStack, archiveId: string): Promise<{ id: string; sha256: string; onDisk: string; storageKey: string }[]> {
  const rows = await stack.query<{ id: string; sha256: string; storage_key: string }>('SELECT id, sha256, storage_key FROM originals WHERE archive_id = :archiveId', { archiveId });
  return rows.map((r) => ({ id: r.id, sha256: r.sha256, storageKey: r.storage_key, onDisk: sha256(fs.readFileSync(path.join(stack.storageDir, r.storage_key))) }));
}
