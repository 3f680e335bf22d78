/**
 * The second round of hardening (issue 15) against the test run's web server: sign-in limits that a
 * forged X-Forwarded-For does not reset and that only failures use up, API-token calls free of the
 * cross-site form check, destinations after sign-in kept on this site, an X-Archive header that is
 * obeyed or refused, malformed and concurrent requests answered 400/409 instead of 500, and sign-out
 * that ends the session on the server.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import { Batch, closeDb, db, Invitation, Membership, User } from '../../../db/index.ts';
import { asSession, asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../../support/fixtures.ts';
import { BASE, Client } from '../../support/http.ts';
import { waitForMail } from '../../support/outbox.ts';
import { createBatch, generatedScans, upload, waitSettled } from '../../support/scans.ts';

let a: TestArchive;
let b: TestArchive;
beforeAll(async () => {
  [a, b] = await Promise.all([makeArchive('harden-a'), makeArchive('harden-b')]);
});
afterAll(() => closeDb());

const failures = (key: string) => db().query<{ points: number }>('SELECT points FROM signin_failures WHERE key = :key', { replacements: { key }, type: QueryTypes.SELECT });

describe('sign-in limits', () => {
  it('keeps counting when every attempt claims another X-Forwarded-For, and refuses the right password after ten failures', async () => {
    const c = new Client();
    const signInFrom = async (forwardedFor: string, password: string) => {
      const csrf = await c.get('/api/auth/csrf');
      return c.request('POST', '/api/auth/callback/credentials', {
        body: new URLSearchParams({ email: a.viewer.email, password, csrfToken: csrf.body.csrfToken, callbackUrl: `${BASE}/` }),
        headers: { 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html', 'x-forwarded-for': forwardedFor },
      });
    };
    for (let i = 0; i < 10; i++) expect((await signInFrom(`203.0.113.${i + 1}`, `wrong-${i}`)).headers.get('location') ?? '').toContain('error=CredentialsSignin');
    const blocked = await signInFrom('198.51.100.77', TEST_PASSWORD);
    expect(blocked.headers.get('location')).toContain('error=TooMany');
    expect((await c.get('/api/me')).status).toBe(401);
    // Counted in PostgreSQL under the connection's address, not any address the requests claimed.
    expect(await failures(`account:127.0.0.1 ${a.viewer.email}`)).toEqual([{ points: 10 }]);
  });

  it('does not count successful sign-ins: an editor who signs in twelve times in a row is never locked out', async () => {
    for (let i = 0; i < 12; i++) {
      const c = new Client();
      const r = await c.signIn(a.editor.email, TEST_PASSWORD);
      expect(r.headers.get('location') ?? '', `sign-in ${i + 1}`).not.toContain('error=');
      expect((await c.get('/api/me')).status, `sign-in ${i + 1}`).toBe(200);
    }
    expect(await failures(`account:127.0.0.1 ${a.editor.email}`)).toEqual([]);
  });
});

describe('calls with an API token', () => {
  let item: string;
  beforeAll(async () => {
    const editor = asToken(a.editor);
    const batch = await createBatch(editor, 'Token calls');
    const [scan] = await generatedScans(1, 9300, { width: 240, height: 160 });
    const up = await upload(editor, batch, scan.name, scan.bytes);
    if (up.status !== 201) throw new Error(`uploading the print answered ${up.status}: ${up.text}`);
    item = up.body.item.id;
    await waitSettled(editor, batch);
  }, 240_000);

  /** A request as curl sends it: no Origin, and the content type given or none. */
  const bare = (path: string, init: { headers?: Record<string, string>; body?: BodyInit } = {}) =>
    fetch(BASE + path, { method: 'POST', headers: { authorization: `Bearer ${a.editor.token}`, ...(init.headers ?? {}) }, body: init.body, redirect: 'manual' });

  it("work as the README's retry, restore and rescan examples send them (no content type, or curl's form type)", async () => {
    // retry of a print that has not failed: refused, but by the route, in the JSON shape
    const retry = await bare(`/api/items/${item}/retry`);
    expect(retry.status).toBe(409);
    expect((await retry.json()).error.code).toBeTruthy();
    const restore = await bare(`/api/items/${item}/corrections/1/restore`);
    expect(restore.status, await restore.clone().text()).toBe(202);
    const [negative] = await generatedScans(1, 9301, { width: 240, height: 160 });
    // curl --data-binary sends application/x-www-form-urlencoded
    const rescan = await bare(`/api/items/${item}/rescan`, { headers: { 'x-file-name': 'negative-frame-2.jpg', 'content-type': 'application/x-www-form-urlencoded' }, body: negative.bytes as unknown as BodyInit });
    expect(rescan.status, await rescan.clone().text()).toBe(202);
  });

  it('answers an address whose %-escapes do not decode with a 400 in the JSON error shape', async () => {
    const r = await fetch(`${BASE}/api/items/%E0%A4%A/retry`, { method: 'POST', headers: { authorization: `Bearer ${a.editor.token}` } });
    expect(r.status).toBe(400);
    expect(r.headers.get('content-type')).toContain('application/json');
    expect((await r.json()).error.code).toBe('invalid_input');
  });

  it('still refuses a cookie session posting from another site, in the JSON error shape', async () => {
    const session = await asSession(b.editor);
    const r = await fetch(`${BASE}/api/batches`, {
      method: 'POST',
      headers: { cookie: session.cookieHeader(), origin: 'https://evil.example', 'content-type': 'application/x-www-form-urlencoded' },
      body: 'name=Forged',
    });
    expect(r.status).toBe(403);
    expect(r.headers.get('content-type')).toContain('application/json');
    expect((await r.json()).error.code).toBe('cross_site');
    expect(await Batch.count({ where: { archiveId: b.id, name: 'Forged' } })).toBe(0);
  });
});

describe('the destination after sign-in', () => {
  it('goes only to paths of this site: a backslash, two slashes or another origin lead home', async () => {
    const session = await asSession(a.owner);
    const cases: [string, string][] = [
      ['/\\evil.example', '/'],
      ['/\\/evil.example', '/'],
      ['//evil.example', '/'],
      ['https://evil.example/', '/'],
      ['/batches?view=open', '/batches?view=open'],
    ];
    for (const [next, want] of cases) {
      const r = await session.get(`/signin?next=${encodeURIComponent(next)}`, { accept: 'text/html' });
      expect([r.status, r.headers.get('location')], next).toEqual([303, want]);
    }
    // Signed out, the form carries the same safe destination.
    const page = await new Client().get(`/signin?next=${encodeURIComponent('/\\evil.example')}`, { accept: 'text/html' });
    expect(page.text).toContain(`name="callbackUrl" value="${BASE}/"`);
  });

  it('answers 400 to a destination holding CR/LF, signed in or not', async () => {
    const session = await asSession(a.owner);
    for (const c of [session, new Client()]) {
      const r = await c.get('/signin?next=%2Fbatches%0D%0ASet-Cookie%3A%20x%3D1', { accept: 'text/html' });
      expect(r.status).toBe(400);
      expect(r.body.error.code).toBe('invalid_input');
      expect(r.headers.get('set-cookie') ?? '').not.toContain('x=1');
    }
  });
});

describe('the X-Archive header', () => {
  it("answers 404 for an archive the caller does not belong to, and creates nothing in either archive", async () => {
    const before = await Batch.count({ where: { archiveId: [a.id, b.id] } });
    const r = await asToken(a.editor).request('POST', '/api/batches', { json: { name: 'Wrong archive?', sourceKind: 'box' }, headers: { 'x-archive': b.slug } });
    expect(r.status).toBe(404);
    expect(r.body.error.code).toBe('not_found');
    expect(await Batch.count({ where: { archiveId: [a.id, b.id] } })).toBe(before);
    const unknown = await asToken(a.editor).request('GET', '/api/batches', { headers: { 'x-archive': 'no-such-archive' } });
    expect(unknown.status).toBe(404);
    // The caller's own archive named in the header works.
    const own = await asToken(a.editor).request('POST', '/api/batches', { json: { name: 'Right archive', sourceKind: 'box' }, headers: { 'x-archive': a.slug } });
    expect(own.status).toBe(201);
    expect((await Batch.findByPk(own.body.id))?.archiveId).toBe(a.id);
  });
});

describe('malformed and concurrent requests', () => {
  it('answers 400 to a state-changing request whose Referer is not a URL and that has no Origin', async () => {
    const session = await asSession(b.editor);
    const before = await Batch.count({ where: { archiveId: b.id } });
    const r = await fetch(`${BASE}/api/batches`, {
      method: 'POST',
      headers: { cookie: session.cookieHeader(), referer: 'http://[not a url', 'content-type': 'application/json' },
      body: JSON.stringify({ name: 'From nowhere', sourceKind: 'box' }),
    });
    expect(r.status).toBe(400);
    expect((await r.json()).error.code).toBe('invalid_input');
    expect(await Batch.count({ where: { archiveId: b.id } })).toBe(before);
  });

  it('accepts one invitation once when ten accepts arrive together: one 200, nine 409, one account and one membership', async () => {
    const email = `twin.${a.slug}@test.example`;
    expect((await asToken(a.owner).post('/api/team/invitations', { email, role: 'viewer' })).status).toBe(201);
    const mail = await waitForMail(email, /invited/);
    const token = new URL(mail.links.find((l) => l.includes('/invite/'))!).pathname.split('/').pop()!;
    const replies = await Promise.all(Array.from({ length: 10 }, () => new Client().post(`/api/invitations/${token}`, { name: 'Twin Cousin', password: 'a long enough password' })));
    const statuses = replies.map((r) => r.status).sort();
    expect(statuses).toEqual([200, ...Array(9).fill(409)]);
    for (const r of replies.filter((x) => x.status === 409)) expect(r.body.error.code).toBe('invitation_used');
    const users = await User.findAll({ where: { email } });
    expect(users).toHaveLength(1);
    expect(await Membership.count({ where: { userId: users[0].id, archiveId: a.id } })).toBe(1);
    expect((await Invitation.findOne({ where: { email } }))?.acceptedAt).toBeTruthy();
  });
});

describe('signing out', () => {
  it('ends the session on the server: a copy of the cookie taken before stops working', async () => {
    // a.viewer is locked out by the sign-in limit test above
    const session = await asSession(b.viewer);
    const copy = session.cookieHeader();
    expect((await fetch(`${BASE}/api/me`, { headers: { cookie: copy } })).status).toBe(200);
    const out = await session.request('POST', '/api/session/signout', { headers: { accept: 'application/json' } });
    expect(out.status).toBe(204);
    expect((await fetch(`${BASE}/api/me`, { headers: { cookie: copy } })).status).toBe(401);
    const page = await fetch(`${BASE}/batches`, { headers: { cookie: copy }, redirect: 'manual' });
    expect(page.status).toBe(303);
    // Signing in again gives a new session that works.
    const again = await asSession(b.viewer);
    expect((await again.get('/api/me')).status).toBe(200);
  });
});
