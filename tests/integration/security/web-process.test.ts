/**
 * The web process under abuse, on a stack of its own (its memory and its log are read, and it is
 * restarted): oversized bodies are refused without being read, counters of failed sign-ins live in
 * PostgreSQL, a trusted proxy's X-Forwarded-For is believed and nobody else's, the Outbox answers
 * only this machine, a garbage cookie costs one log line, and the session secret is this install's.
 */
import { createHash, randomBytes } from 'node:crypto';
import fs from 'node:fs';
import net from 'node:net';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { TEST_PASSWORD, type TestArchive } from '../../support/fixtures.ts';
import { BASE, Client } from '../../support/http.ts';

let stack: IsolatedStack;
let a: TestArchive;
beforeAll(async () => {
  // 127.0.0.1 plays the reverse proxy: requests carrying X-Forwarded-For come "through" it.
  stack = await startIsolatedStack({ label: 'web-process', workers: 0, env: { TRUSTED_PROXIES: '127.0.0.1' } });
  a = await stack.makeArchive('web-process');
}, 180_000);
afterAll(async () => {
  await stack?.stop();
  await closeDb();
});

/** Resident memory of a process in MB, from /proc. */
function rssMb(pid: number): number {
  const kb = Number(/VmRSS:\s+(\d+)/.exec(fs.readFileSync(`/proc/${pid}/status`, 'utf8'))![1]);
  return kb / 1024;
}

const MB = 1024 * 1024;

/** The body of a raw HTTP/1.1 answer, undoing chunked transfer encoding. */
function answerBody(head: string, rest: Buffer): string {
  if (!/^transfer-encoding:\s*chunked/im.test(head)) return rest.toString('utf8');
  const parts: Buffer[] = [];
  let at = 0;
  for (;;) {
    const eol = rest.indexOf('\r\n', at);
    const size = parseInt(rest.subarray(at, eol).toString(), 16);
    if (!size) break;
    parts.push(rest.subarray(eol + 2, eol + 2 + size));
    at = eol + 2 + size + 2;
  }
  return Buffer.concat(parts).toString('utf8');
}

/**
 * Sends up to `totalBytes` of body in 64 KB chunks over a socket of its own (with a Content-Length,
 * or chunked when `declare` is false), stopping as soon as the answer arrives, and reading the answer
 * apart from the writing (the server closing its end makes our writes fail, never the read).
 */
function sendOversized(url: string, opts: { totalBytes: number; declare: boolean; contentType: string }): Promise<{ status: number; body: string; sentMb: number }> {
  return new Promise((resolve, reject) => {
    const u = new URL(url);
    const socket = net.connect({ host: u.hostname, port: Number(u.port) });
    const head = [
      `POST ${u.pathname} HTTP/1.1`,
      `Host: ${u.host}`,
      `Content-Type: ${opts.contentType}`,
      `Origin: ${u.origin}`,
      'Accept: application/json',
      opts.declare ? `Content-Length: ${opts.totalBytes}` : 'Transfer-Encoding: chunked',
      'Connection: close',
      '',
      '',
    ].join('\r\n');
    const received: Buffer[] = [];
    let answered = false;
    let sent = 0;
    socket.on('data', (d) => {
      received.push(d);
      answered ||= Buffer.concat(received).includes('\r\n\r\n');
    });
    socket.on('error', () => undefined);
    socket.on('close', () => {
      const all = Buffer.concat(received);
      const split = all.indexOf('\r\n\r\n');
      if (split < 0) return reject(new Error(`the connection closed without an answer after ${(sent / MB).toFixed(1)} MB`));
      const headText = all.subarray(0, split).toString();
      resolve({ status: Number(headText.split(' ')[1]), body: answerBody(headText, all.subarray(split + 4)), sentMb: sent / MB });
    });
    const chunk = Buffer.alloc(64 * 1024, 'a');
    const frame = opts.declare ? chunk : Buffer.concat([Buffer.from(`${chunk.length.toString(16)}\r\n`), chunk, Buffer.from('\r\n')]);
    const pump = () => {
      while (!answered && !socket.destroyed && sent < opts.totalBytes) {
        sent += chunk.length;
        if (!socket.write(frame)) return void socket.once('drain', pump);
      }
      if (!answered && !socket.destroyed) socket.end(opts.declare ? Buffer.alloc(0) : '0\r\n\r\n');
    };
    socket.once('connect', () => {
      socket.write(head);
      pump();
    });
  });
}

describe('request bodies over the limit', () => {
  it('keeps the web server flat under 20 anonymous 200 MB bodies (JSON accepts and sign-in forms, with and without a length), each refused with 413 and changing nothing', async () => {
    const pid = stack.serverPid()!;
    // An open invitation the oversized accepts are aimed at (made with SQL: its token is otherwise only in the e-mail).
    const owner = stack.client(a.owner.token);
    const invited = `oversize.${a.slug}@test.example`;
    const token = randomBytes(24).toString('base64url');
    await stack.sql.query("INSERT INTO invitations (archive_id, email, role, token_hash, expires_at) VALUES (:archive, :invited, 'viewer', :hash, now() + interval '1 day')", {
      replacements: { archive: a.id, invited, hash: createHash('sha256').update(token).digest('hex') },
    });
    const acceptUrl = `${stack.appUrl}/api/invitations/${token}`;
    const failuresBefore = await stack.query('SELECT key, points FROM signin_failures ORDER BY key');
    for (let i = 0; i < 3; i++) await new Client(undefined, stack.appUrl).get('/signin');
    const before = rssMb(pid);

    const replies = [];
    for (let i = 0; i < 20; i++) {
      const signin = i % 2 === 1;
      replies.push(
        await sendOversized(signin ? `${stack.appUrl}/api/auth/callback/credentials` : acceptUrl, {
          totalBytes: 200 * MB,
          declare: i % 4 < 2,
          contentType: signin ? 'application/x-www-form-urlencoded' : 'application/json',
        }),
      );
    }
    const after = rssMb(pid);
    console.log(`web server RSS: ${before.toFixed(0)} MB before, ${after.toFixed(0)} MB after 20 refused 200 MB bodies`);
    for (const r of replies) {
      expect(r.status).toBe(413);
      expect(JSON.parse(r.body).error.code).toBe('too_large');
      // Refused at the limit (1 MiB for JSON, 64 KB for forms), give or take what was in flight.
      expect(r.sentMb).toBeLessThan(40);
    }
    expect(after - before, `RSS went from ${before.toFixed(0)} MB to ${after.toFixed(0)} MB`).toBeLessThan(60);
    // Nothing changed: no account for the invited address, the invitation still open, no sign-in counted.
    expect(await stack.query('SELECT id FROM users WHERE email = :invited', { invited })).toEqual([]);
    expect(await stack.query('SELECT accepted_at FROM invitations WHERE email = :invited', { invited })).toEqual([{ accepted_at: null }]);
    expect(await stack.query('SELECT key, points FROM signin_failures ORDER BY key')).toEqual(failuresBefore);
    // The server still answers.
    expect((await owner.get('/api/me')).status).toBe(200);
  }, 180_000);
});

describe('client addresses and sign-in counters', () => {
  const signInVia = async (forwardedFor: string, password: string) => {
    const c = new Client(undefined, stack.appUrl);
    const csrf = await c.get('/api/auth/csrf');
    const r = await c.request('POST', '/api/auth/callback/credentials', {
      body: new URLSearchParams({ email: a.editor.email, password, csrfToken: csrf.body.csrfToken, callbackUrl: `${stack.appUrl}/` }),
      headers: { 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html', 'x-forwarded-for': forwardedFor },
    });
    return { location: r.headers.get('location') ?? '', me: (await c.get('/api/me')).status };
  };

  it("believes the trusted proxy's X-Forwarded-For, keeps the failures in PostgreSQL, and still counts them after the web server restarts", async () => {
    for (let i = 0; i < 10; i++) expect((await signInVia('203.0.113.5', `wrong-${i}`)).location).toContain('error=CredentialsSignin');
    // Behind the proxy, another family member's address is not locked out.
    expect(await signInVia('203.0.113.6', TEST_PASSWORD)).toMatchObject({ me: 200 });
    expect(await stack.query('SELECT points FROM signin_failures WHERE key = :key', { key: `account:203.0.113.5 ${a.editor.email}` })).toEqual([{ points: 10 }]);
    // What a client writes left of the proxy's entry is not its address.
    expect((await signInVia('198.51.100.1, 203.0.113.5', TEST_PASSWORD)).location).toContain('error=TooMany');

    await stack.stopServer();
    await stack.startServer();
    const locked = await signInVia('203.0.113.5', TEST_PASSWORD);
    expect(locked.location).toContain('error=TooMany');
    expect(locked.me).toBe(401);
  }, 120_000);

  it('shows the Outbox (sign-in links) only to a client on this machine', async () => {
    const here = await fetch(`${stack.appUrl}/outbox`);
    expect(here.status).toBe(200);
    const remote = await fetch(`${stack.appUrl}/outbox`, { headers: { 'x-forwarded-for': '203.0.113.9' } });
    expect(remote.status).toBe(404);
    expect(await remote.text()).not.toContain('Outbox');
  });
});

describe('logs and secrets', () => {
  it('logs one line, not a stack trace, for a request with a garbage session cookie', async () => {
    const log = path.join(stack.dir, 'logs', 'server.log');
    const start = fs.statSync(log).size;
    for (let i = 0; i < 3; i++) {
      const r = await fetch(`${stack.appUrl}/api/me`, { headers: { cookie: `authjs.session-token=garbage-${i}` } });
      expect(r.status).toBe(401);
    }
    const added = fs.readFileSync(log, 'utf8').slice(start).split('\n').filter(Boolean);
    expect(added.length, added.join('\n')).toBeLessThanOrEqual(3);
    expect(added.filter((l) => /^\s+at /.test(l))).toEqual([]);
  });

  it('signs sessions with a secret of its own install: a session cookie of this stack is refused by another', async () => {
    const secret = path.join(stack.storageDir, '.auth-secret');
    expect(fs.statSync(secret).mode & 0o777).toBe(0o600);
    expect(fs.readFileSync(secret, 'utf8').trim().length).toBeGreaterThanOrEqual(32);
    const c = new Client(undefined, stack.appUrl);
    await c.signIn(a.owner.email, TEST_PASSWORD);
    expect((await c.get('/api/me')).status).toBe(200);
    // The test run's own server (another install, another storage folder) does not take it.
    const elsewhere = await fetch(`${BASE}/api/me`, { headers: { cookie: c.cookieHeader() } });
    expect(elsewhere.status).toBe(401);
  });
});
