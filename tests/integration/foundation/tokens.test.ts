import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { asSession, asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { Client } from '../../support/http.ts';

let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('tokens');
});
afterAll(() => closeDb());

describe('personal API tokens', () => {
  it('authenticates a Bearer token with its owner\'s roles', async () => {
    const me = await asToken(a.editor).get('/api/me');
    expect(me.status).toBe(200);
    expect(me.body.user.email).toBe(a.editor.email);
    expect(me.body.archives).toEqual([expect.objectContaining({ slug: a.slug, role: 'editor' })]);
  });

  it('refuses an unknown token with 401 and the JSON error shape', async () => {
    const r = await new Client('dlt_not-a-real-token').get('/api/me');
    expect(r.status).toBe(401);
    expect(r.body.error).toMatchObject({ code: 'bad_token', message: expect.any(String) });
  });

  it('stops working the moment it is revoked', async () => {
    const owner = await asSession(a.owner);
    const created = await owner.post('/api/tokens', { name: 'scanning station' });
    expect(created.status).toBe(201);
    expect(created.headers.get('location')).toBe(`/api/tokens/${created.body.id}`);
    const token = created.body.token as string;
    expect((await new Client(token).get('/api/me')).status).toBe(200);
    const listed = await owner.get('/api/tokens');
    expect(JSON.stringify(listed.body)).not.toContain(token);
    expect((await owner.delete(`/api/tokens/${created.body.id}`)).status).toBe(204);
    expect((await new Client(token).get('/api/me')).status).toBe(401);
  });

  it('does not let one user revoke another user\'s token (404)', async () => {
    const viewer = await asSession(a.viewer);
    const owner = await asSession(a.owner);
    const created = await owner.post('/api/tokens', { name: 'mine' });
    expect((await viewer.delete(`/api/tokens/${created.body.id}`)).status).toBe(404);
  });
});
