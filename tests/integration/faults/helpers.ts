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

/**
 * Uploads every file `atOnce` at a time; a file whose request failed (connection refused or reset,
 * a 5xx) is sent again until the server answers 201 (added) or 200 (the same bytes already
 * stored: the earlier attempt got through before the answer was lost). `onStored` sees the count.
 */
export async function uploadRetrying(client: Client, batchId: string, files: { name: string; bytes: Buffer }[], atOnce: number, onStored?: (n: number) => void, deadlineMs = 150_000): Promise<UploadRecord[]> {
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
          }
          await sleep(250);
        }
        onStored?.(++stored);
      }
    }),
  );
  return records;
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
