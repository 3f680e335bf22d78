import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import { closeDb, db } from '../../../db/index.ts';
import { PRESENCE_PREFIX } from '../../../jobs/presence.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { createBatch, generatedScans, uploadAll, waitSettled } from '../../support/scans.ts';
import { until } from '../../support/until.ts';

let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('orphaned-claim');
});
afterAll(() => closeDb());

describe('a print a live worker holds in analysis with no job of its own', () => {
  it('is queued again by that worker and analysed, without waiting for the job lease to run out', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Left in analysis');
    const replies = await uploadAll(editor, batchId, await generatedScans(1, 8300), 1);
    expect(replies.map((r) => r.status)).toEqual([201]);
    await waitSettled(editor, batchId);
    const itemId = replies[0].body.item.id as string;

    // What a worker leaves behind when the database goes away between its claim and the hand-back:
    // the print in analysis under that (live) worker's name, and no job for it anywhere.
    const [worker] = await db().query<{ id: string }>(
      `SELECT substr(application_name, length(:prefix) + 1) AS id FROM pg_stat_activity WHERE application_name LIKE :prefix || '%' LIMIT 1`,
      { replacements: { prefix: PRESENCE_PREFIX }, type: QueryTypes.SELECT },
    );
    expect(worker?.id, 'a live worker on the test database').toBeTruthy();
    await db().query(
      `UPDATE items SET state = 'analysing', analysing_by = :worker, updated_at = now() - interval '2 minutes' WHERE id = :id`,
      { replacements: { worker: worker.id, id: itemId } },
    );

    const [item] = await until(
      'the print to be analysed again',
      async () => {
        const rows = await db().query<{ state: string; analysis_runs: number; analysing_by: string | null }>(
          'SELECT state, analysis_runs, analysing_by FROM items WHERE id = :id',
          { replacements: { id: itemId }, type: QueryTypes.SELECT },
        );
        return rows[0]?.state === 'ready' ? rows : null;
      },
      120_000,
    );
    // claimed once by the upload's job and once more after the worker handed it back
    expect(item).toMatchObject({ state: 'ready', analysis_runs: 2, analysing_by: null });
  });
});
