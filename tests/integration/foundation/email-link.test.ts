import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { BASE, Client } from '../../support/http.ts';
import { waitForMail } from '../../support/outbox.ts';

let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('link');
});
afterAll(() => closeDb());

async function requestLink(c: Client, email: string) {
  const csrf = await c.get('/api/auth/csrf');
  return c.request('POST', '/api/auth/signin/nodemailer', {
    body: new URLSearchParams({ email, csrfToken: csrf.body.csrfToken, callbackUrl: `${BASE}/` }),
    headers: { 'content-type': 'application/x-www-form-urlencoded' },
  });
}

describe('one-time e-mail sign-in links', () => {
  it('signs a member in once through the link from the e-mail', async () => {
    const c = new Client();
    const asked = await requestLink(c, a.editor.email);
    expect(asked.headers.get('location')).toBe(`${BASE}/api/auth/verify-request?provider=nodemailer&type=email`);
    const landing = await c.get('/api/auth/verify-request?provider=nodemailer&type=email');
    expect(landing.headers.get('location')).toContain('/signin?link=sent');
    const mail = await waitForMail(a.editor.email, /sign-in link/);
    const link = mail.links.find((l) => l.includes('/api/auth/callback/nodemailer'))!;
    expect(link).toBeTruthy();
    const path = link.replace(new URL(link).origin, '');
    const used = await c.get(path);
    expect(used.status).toBe(302);
    expect((await c.get('/api/me')).body.user.email).toBe(a.editor.email);

    const again = new Client();
    const reused = await again.get(path);
    expect(reused.headers.get('location')).toContain('error=Verification');
    expect((await again.get('/api/me')).status).toBe(401);
  });

  it('answers an unknown address exactly like a known one and sends nothing', async () => {
    const c = new Client();
    const stranger = `nobody.${a.slug}@test.example`;
    const asked = await requestLink(c, stranger);
    expect(asked.status).toBe(302);
    expect(asked.headers.get('location')).toBe(`${BASE}/api/auth/verify-request?provider=nodemailer&type=email`);
    await expect(waitForMail(stranger, /sign-in link/, 2_000)).rejects.toThrow(/no e-mail/);
  });
});
