/**
 * The mail server down when a batch finishes: the "batch finished" e-mail is not lost. The batch is
 * marked as told and its message queued in one transaction; the mail queue's send meets the closed
 * port and is tried again later; once the mail server is back, exactly one e-mail goes out, with
 * every print counted.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { createBatch, generatedScans, upload, waitSettled } from '../../support/scans.ts';
import { caughtMail, until } from './helpers.ts';

let stack: IsolatedStack;
let a: TestArchive;
beforeAll(async () => {
  stack = await startIsolatedStack({ label: 'maildown', workers: 1 });
  a = await stack.makeArchive('maildown');
}, 180_000);
afterAll(() => stack?.stop());

describe('the mail server down when a batch finishes', () => {
  it('sends the batch finished e-mail once the mail server is back, once, with every print counted', async () => {
    await stack.stopMail();
    const editor = stack.client(a.editor.token);
    const batchId = await createBatch(editor, 'Sent while the mail was down');
    for (const f of await generatedScans(3, 9700, { width: 400, height: 300 })) expect((await upload(editor, batchId, f.name, f.bytes)).status).toBe(201);
    expect((await waitSettled(editor, batchId)).counts).toMatchObject({ total: 3, ready: 3 });

    // pg-boss's job table, read by the test only: the message met the closed port and waits for its retry.
    const [failed] = await until(
      'the e-mail to have failed to send',
      async () => {
        const rows = await stack.query<{ state: string; retry_count: number; output: unknown }>(
          "SELECT state, retry_count, output FROM pgboss.job WHERE name = 'mail' AND data->>'to' = :to AND state IN ('retry', 'failed')",
          { to: a.editor.email },
        );
        return rows.length > 0 && rows;
      },
      120_000,
    );
    expect(failed.state).toBe('retry');
    expect(JSON.stringify(failed.output)).toMatch(/ECONNREFUSED/);
    // The batch counts as told (its message is queued), and nothing was caught.
    const [told] = await stack.query<{ told: boolean }>('SELECT finished_notified_at IS NOT NULL AS told FROM batches WHERE id = :batchId', { batchId });
    expect(told.told).toBe(true);
    expect(caughtMail(stack)).toEqual([]);

    await stack.startMail();
    const mine = () => caughtMail(stack).filter((m) => m.to.includes(a.editor.email) && m.subject.includes('Sent while the mail was down'));
    await until('the batch finished e-mail, sent by a retry', async () => mine().length > 0, 180_000);
    expect(mine()).toHaveLength(1);
    expect(mine()[0].text).toContain('All 3 scans');
    expect(mine()[0].text).toContain('3 ready for review');
  }, 400_000);
});
