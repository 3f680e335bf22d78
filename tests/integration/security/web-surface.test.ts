import { execFile, spawn } from 'node:child_process';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { portFree, waitForPort } from '../../../src/scripts/processes.ts';
import { makeArchive, TEST_PASSWORD, type TestArchive } from '../../support/fixtures.ts';
import { Client } from '../../support/http.ts';

const run = promisify(execFile);
let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('surface');
});
afterAll(() => closeDb());

async function freePort(from: number): Promise<number> {
  for (let p = from; p < from + 200; p++) if (await portFree(p)) return p;
  throw new Error('no free port');
}

describe('the web surface', () => {
  it('sends a content security policy, frame-ancestors, nosniff and a request id on pages and API answers', async () => {
    for (const path of ['/signin', '/api/me']) {
      const r = await new Client().get(path);
      const csp = r.headers.get('content-security-policy') ?? '';
      expect(csp).toContain("default-src 'self'");
      expect(csp).toContain("frame-ancestors 'none'");
      expect(csp).toContain("object-src 'none'");
      // Only our own script files and the build's inline scripts by hash: no 'unsafe-inline' for scripts.
      expect(csp.split(';').find((d) => d.trim().startsWith('script-src'))).not.toContain('unsafe-inline');
      expect(r.headers.get('x-content-type-options')).toBe('nosniff');
      expect(r.headers.get('x-frame-options')).toBe('DENY');
      expect(r.headers.get('x-request-id')).toBeTruthy();
    }
  });

  it('limits password attempts per account: the eleventh in 15 minutes is refused, even with the right password', async () => {
    const c = new Client();
    for (let i = 0; i < 10; i++) {
      const r = await c.signIn(a.viewer.email, `wrong-${i}`);
      expect(r.headers.get('location') ?? '').toContain('error=CredentialsSignin');
    }
    const blocked = await c.signIn(a.viewer.email, TEST_PASSWORD);
    expect(blocked.status).toBe(303);
    expect(blocked.headers.get('location')).toContain('error=TooMany');
    expect((await c.get('/api/me')).status).toBe(401);
    // Another member of the family is not locked out by those attempts.
    const other = new Client();
    await other.signIn(a.editor.email, TEST_PASSWORD);
    expect((await other.get('/api/me')).status).toBe(200);
  });

  it('limits e-mail sign-in link requests the same way (429 for scripts)', async () => {
    const c = new Client();
    const statuses: number[] = [];
    for (let i = 0; i < 11; i++) {
      const csrf = await c.get('/api/auth/csrf');
      const r = await c.request('POST', '/api/auth/signin/nodemailer', {
        body: new URLSearchParams({ email: a.owner.email, csrfToken: csrf.body.csrfToken, callbackUrl: '/' }),
        headers: { 'content-type': 'application/x-www-form-urlencoded' },
      });
      statuses.push(r.status);
    }
    expect(statuses.slice(0, 10).every((s) => s !== 429)).toBe(true);
    expect(statuses[10]).toBe(429);
  });

  it('refuses a production start without its secrets, naming what is missing', async () => {
    const env = { ...process.env, APP_ENV: 'production', AUTH_SECRET: '', PORT: String(await freePort(47100)) };
    delete (env as Record<string, string | undefined>).AUTH_SECRET;
    const r = await run(process.execPath, ['--import', 'tsx', 'src/scripts/serve.ts'], { env, timeout: 60_000 }).then(
      () => ({ code: 0, stderr: '' }),
      (e) => ({ code: e.code as number, stderr: String(e.stderr) }),
    );
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/refuses to start in production without: AUTH_SECRET/);
  });

  it('sets Secure, HttpOnly, SameSite cookies and HSTS in production', async () => {
    const port = await freePort(47300);
    const child = spawn(process.execPath, ['--import', 'tsx', 'src/scripts/serve.ts'], {
      env: { ...process.env, APP_ENV: 'production', AUTH_SECRET: 'x'.repeat(40), APP_URL: `https://127.0.0.1:${port}`, SMTP_HOST: '127.0.0.1', HOST: '127.0.0.1', PORT: String(port) },
      stdio: 'ignore',
    });
    try {
      await waitForPort(port, 60_000, 'the production server');
      const res = await fetch(`http://127.0.0.1:${port}/api/auth/csrf`);
      const cookies = res.headers.getSetCookie();
      expect(cookies.length).toBeGreaterThan(0);
      for (const c of cookies) {
        expect(c).toMatch(/;\s*Secure/i);
        expect(c).toMatch(/;\s*HttpOnly/i);
        expect(c).toMatch(/;\s*SameSite=Lax/i);
      }
      const page = await fetch(`http://127.0.0.1:${port}/signin`);
      expect(page.headers.get('strict-transport-security')).toContain('max-age=');
      const outbox = await fetch(`http://127.0.0.1:${port}/outbox`);
      expect(outbox.status).toBe(404);
    } finally {
      child.kill('SIGTERM');
    }
  });
});
