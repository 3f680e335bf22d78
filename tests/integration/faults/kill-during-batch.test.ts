import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generatedScans, createBatch, waitSettled } from '../../support/scans.ts';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { caughtMail, originalsOnDisk, temporaryFiles, until, uploadRetrying } from './helpers.ts';

let stack: IsolatedStack;
let a: TestArchive;
beforeAll(async () => {
  // Orphaned staged uploads are cleared after 6 s here (30 min by default), so the test sees the sweep.
  stack = await startIsolatedStack({ label: 'killbatch', workers: 1, env: { STALE_UPLOAD_MINUTES: '0.1' } });
  a = await stack.makeArchive('killbatch');
});
afterAll(() => stack?.stop());

describe('the worker and then the web server killed with kill -9 during a 50-file batch', () => {
  it('loses nothing and stores nothing twice: every file once as one item, each ready once, every original intact', async () => {
    const editor = stack.client(a.editor.token);
    const batchId = await createBatch(editor, 'Killed twice');
    // Small scans (400x300): the faults matter here, not the pixels.
    const files = await generatedScans(50, 7000, { width: 400, height: 300 });

    let stored = 0;
    let networkErrors = 0;
    const uploads = uploadRetrying(editor, batchId, files, 4, { onStored: (n) => (stored = n), onNetworkError: () => networkErrors++ });

    // First the worker, while it holds analyses; then the web server, while uploads are in flight.
    // The worker is frozen (SIGSTOP) before it is killed, so the prints it holds in analysis are
    // known for certain; a look that found it between two prints lets it go on and looks again.
    const analysing = () => stack.query<{ id: string }>("SELECT id FROM items WHERE batch_id = :batchId AND state = 'analysing'", { batchId });
    await until('ten files stored and the worker frozen while it holds analyses', async () => {
      if (stored < 10) return false;
      const [pid] = stack.workerPids();
      process.kill(pid, 'SIGSTOP');
      if ((await analysing()).length > 0) return true;
      process.kill(pid, 'SIGCONT');
      return false;
    });
    await stack.stopWorkers('SIGKILL');
    // read again once it is dead: a statement it had sent before it froze may have landed since
    const cutShort = (await analysing()).map((h) => h.id);
    expect(cutShort.length).toBeGreaterThan(0);
    const atWorkerKill = stored;
    await until('25 files stored', async () => stored >= 25);
    await stack.stopServer('SIGKILL');
    const atServerKill = stored;
    const errorsAtKill = networkErrors;
    await until('an upload to have failed against the dead port (to be sent again)', async () => networkErrors > errorsAtKill);
    await stack.startServer();
    stack.startWorker();

    const records = await uploads;
    expect(atWorkerKill).toBeLessThan(50);
    expect(atServerKill).toBeLessThan(50);
    const retried = records.filter((r) => r.attempts.length > 1);
    expect(retried.length, 'some uploads failed when the server died and were sent again').toBeGreaterThan(0);

    const status = await waitSettled(editor, batchId, 200_000);
    expect(status.counts).toMatchObject({ total: 50, ready: 50, failed: 0 });

    const items = await stack.query<{ id: string; original_name: string; state: string; sha256: string; seq: number; proposed: string }>(
      `SELECT i.id, i.original_name, i.state, i.seq, o.sha256,
              (SELECT count(*) FROM corrections c WHERE c.item_id = i.id AND c.origin = 'proposed') AS proposed
         FROM items i JOIN originals o ON o.id = i.original_id WHERE i.batch_id = :batchId`,
      { batchId },
    );
    expect(items).toHaveLength(50);
    expect(new Set(items.map((i) => i.seq)).size).toBe(50);
    // The SHA-256 of each uploaded file, computed by the test from the bytes it sent.
    const byHash = new Map(items.map((i) => [i.sha256, i]));
    for (const r of records) {
      expect(byHash.get(r.sha256)?.original_name, `${r.name} (attempts: ${r.attempts.join(', ')})`).toBe(r.name);
    }
    for (const i of items) {
      expect(i.state).toBe('ready');
      expect(Number(i.proposed), `proposed corrections of ${i.original_name}`).toBe(1);
    }
    // The analyses the killed worker held were queued again by the worker that started (not left
    // to their lease), once each; no other print counts as interrupted.
    const interrupted = await stack.query<{ id: string; interruptions: number }>('SELECT id, interruptions FROM items WHERE batch_id = :batchId AND interruptions > 0', { batchId });
    expect(new Set(interrupted.map((i) => i.id))).toEqual(new Set(cutShort));
    for (const i of interrupted) expect(i.interruptions).toBe(1);

    // The creator hears once, about all 50 prints: not about the part done before the kills.
    const finished = () => caughtMail(stack).filter((m) => m.to.includes(a.editor.email) && m.subject.includes('Killed twice'));
    await until('the batch finished e-mail', async () => finished().length > 0, 90_000);
    expect(finished()).toHaveLength(1);
    expect(finished()[0].text).toContain('All 50 scans');
    expect(finished()[0].text).toContain('50 ready for review');

    const originals = await originalsOnDisk(stack, a.id);
    expect(originals).toHaveLength(50);
    for (const o of originals) expect(o.onDisk, o.storageKey).toBe(o.sha256);
    expect(new Set(originals.map((o) => o.sha256))).toEqual(new Set(records.map((r) => r.sha256)));

    // Half-written files of the killed server are cleared by the worker's sweep.
    await until('no temporary files left in storage', async () => temporaryFiles(stack).length === 0, 30_000).catch(() => undefined);
    expect(temporaryFiles(stack)).toEqual([]);
  }, 240_000);
});
