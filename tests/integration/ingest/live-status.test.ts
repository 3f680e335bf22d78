import { QueryTypes } from 'sequelize';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, db } from '../../../db/index.ts';
import { openEvents, type OpenStream } from '../../support/event-stream.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { createBatch, generatedScans, upload } from '../../support/scans.ts';
import { until } from '../../support/until.ts';

let a: TestArchive;
let other: TestArchive;
const streams: OpenStream[] = [];
beforeAll(async () => {
  a = await makeArchive('live');
  other = await makeArchive('live-other');
});
afterAll(async () => {
  for (const s of streams) s.close();
  await closeDb();
});

async function opened(path: string, token: string): Promise<OpenStream> {
  const s = await openEvents(path, token);
  streams.push(s);
  return s;
}

/** The last state an items event gave for `itemId`. */
function stateOf(s: OpenStream, itemId: string): string | undefined {
  let state: string | undefined;
  for (const e of s.events) if (e.event === 'items') state = e.data.items.find((i: { id: string }) => i.id === itemId)?.state ?? state;
  return state;
}

describe('the pushed status of a batch', () => {
  it('sends an item’s change of state to the open stream as it happens, and none of it to another archive', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Watched while it is processed');

    // a viewer of the archive watches the batch with its items; a member of another archive tries to
    const watching = await opened(`/api/batches/${batchId}/events?items=1`, a.viewer.token);
    expect(watching.status).toBe(200);
    expect(watching.contentType).toContain('text/event-stream');
    await until('the first state of the batch', async () => watching.events.some((e) => e.event === 'items' && e.data.full));
    expect(watching.events[0]).toMatchObject({ event: 'counts', data: { batchId, counts: { total: 0 } } });
    expect(watching.events[1]).toMatchObject({ event: 'items', data: { batchId, items: [], full: true } });

    const refused = await opened(`/api/batches/${batchId}/events`, other.owner.token);
    expect(refused.status).toBe(404);
    expect(refused.contentType).not.toContain('text/event-stream');
    expect(JSON.parse(refused.refusal).error.code).toBe('not_found');
    expect(refused.events).toEqual([]);
    // the other archive's list stream stays open, and hears nothing of this batch
    const otherList = await opened('/api/batches/events', other.owner.token);
    expect(otherList.status).toBe(200);
    const ownList = await opened('/api/batches/events', a.editor.token);
    await until('the archive list stream to give its batches', async () => ownList.events.some((e) => e.data.batchId === batchId));

    const [scan] = await generatedScans(1, 7100);
    const reply = await upload(editor, batchId, scan.name, scan.bytes);
    expect(reply.status).toBe(201);
    const itemId = reply.body.item.id as string;

    // pushed, not asked for: the stream was opened before the item existed and is never reopened
    let seen = '';
    await until('the item to arrive as ready on the open stream', async () => (seen = stateOf(watching, itemId) ?? '') === 'ready', 120_000, () => seen);
    const [row] = await db().query<{ state: string }>('SELECT state FROM items WHERE id = :itemId', { replacements: { itemId }, type: QueryTypes.SELECT });
    expect(row.state).toBe('ready');
    await until('the counts to say one ready', async () => watching.events.some((e) => e.event === 'counts' && e.data.counts.ready === 1 && e.data.counts.total === 1));
    await until('the archive list stream to say one ready', async () => ownList.events.some((e) => e.data.batchId === batchId && e.data.counts.ready === 1));

    // the other archive's streams got nothing of it: the refused one nothing at all, the open one no event naming the batch
    expect(refused.events).toEqual([]);
    expect(otherList.events.filter((e) => JSON.stringify(e.data).includes(batchId) || JSON.stringify(e.data).includes(itemId))).toEqual([]);
  });
});
