import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import { closeDb, db } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { Client } from '../../support/http.ts';
import { createBatch } from '../../support/scans.ts';

let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('api-404');
});
afterAll(() => closeDb());

/** The archive's batches and items as they stand, to show a refused call changed nothing. */
async function rows(): Promise<string> {
  const [r] = await db().query<{ h: string }>(
    `SELECT md5(coalesce((SELECT string_agg(to_jsonb(b)::text, '|' ORDER BY b.id) FROM batches b WHERE b.archive_id = :id), '')
             || coalesce((SELECT string_agg(to_jsonb(i)::text, '|' ORDER BY i.id) FROM items i WHERE i.archive_id = :id), '')) AS h`,
    { replacements: { id: a.id }, type: QueryTypes.SELECT },
  );
  return r.h;
}

function expectJson404(r: { status: number; headers: Headers; body: any }, method: string, path: string) {
  expect(r.status, `${method} ${path}`).toBe(404);
  expect(r.headers.get('content-type')).toMatch(/^application\/json/);
  expect(r.body).toEqual({ error: { code: 'not_found', message: `There is no ${method} ${path} in the API.` } });
  // the API's answers carry the same security headers as every other
  expect(r.headers.get('x-content-type-options')).toBe('nosniff');
  expect(r.headers.get('x-request-id')).toBeTruthy();
}

describe('a path under /api/ that no route answers', () => {
  it('gets a JSON 404 in the API error shape, signed in or not, and changes nothing', async () => {
    const owner = asToken(a.owner);
    const batchId = await createBatch(owner, 'Kept as it was');
    const before = await rows();

    expectJson404(await new Client().get('/api/no-such-thing', { accept: 'text/html' }), 'GET', '/api/no-such-thing');
    expectJson404(await owner.get('/api/no-such-thing'), 'GET', '/api/no-such-thing');
    expectJson404(await owner.get(`/api/batches/${batchId}/no-such-part`), 'GET', `/api/batches/${batchId}/no-such-part`);
    expectJson404(await owner.post('/api/batchez', { name: 'Typed wrong' }), 'POST', '/api/batchez');
    expectJson404(await owner.delete(`/api/batches/${batchId}/items/all`), 'DELETE', `/api/batches/${batchId}/items/all`);
    expect(await rows()).toBe(before);
  });

  it('leaves pages alone: an unknown page still gets the HTML 404 page', async () => {
    const r = await asToken(a.owner).get('/no-such-page', { accept: 'text/html' });
    expect(r.status).toBe(404);
    expect(r.headers.get('content-type')).toMatch(/^text\/html/);
    expect(r.text).toMatch(/<html/i);
  });
});
