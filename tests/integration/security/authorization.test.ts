import { randomUUID } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, Membership, User } from '../../../db/index.ts';
import { roleAtLeast, type Role } from '../../../src/lib/auth/roles.ts';
import { createApiToken, revokeApiToken } from '../../../src/lib/server/api-tokens.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { BASE, Client } from '../../support/http.ts';
import { createBatch, generatedScans, upload, waitSettled } from '../../support/scans.ts';
import { ROUTE_RULES, type ResourceName } from './route-rules.ts';

const API_DIR = path.resolve('src/pages/api');
const METHODS = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE', 'ALL'];

/** Every route and method, read from the route files the way Astro maps files to URLs. */
function discoverRoutes(): { key: string; pattern: string; method: string }[] {
  const out: { key: string; pattern: string; method: string }[] = [];
  const walk = (dir: string) => {
    for (const e of fs.readdirSync(dir, { withFileTypes: true })) {
      const p = path.join(dir, e.name);
      if (e.isDirectory()) walk(p);
      else if (/\.(ts|js)$/.test(e.name)) {
        const rel = path.relative(API_DIR, p).split(path.sep).join('/').replace(/\.(ts|js)$/, '').replace(/(^|\/)index$/, '');
        const pattern = `/api${rel ? `/${rel}` : ''}`;
        const src = fs.readFileSync(p, 'utf8');
        for (const m of METHODS) if (new RegExp(`export\\s+(const|async function|function)\\s+${m}\\b`).test(src)) out.push({ key: `${m} ${pattern}`, pattern, method: m });
      }
    }
  };
  walk(API_DIR);
  return out.sort((x, y) => x.key.localeCompare(y.key));
}

type Principal = 'anonymous' | 'revoked token' | 'viewer' | 'editor' | 'owner' | 'other archive';
const PRINCIPALS: Principal[] = ['anonymous', 'revoked token', 'other archive', 'viewer', 'editor', 'owner'];

let a: TestArchive;
let b: TestArchive;
const clients = {} as Record<Principal, Client>;
const resources = {} as Record<ResourceName, string>;

beforeAll(async () => {
  [a, b] = await Promise.all([makeArchive('walk-a'), makeArchive('walk-b')]);
  const revoked = await createApiToken(a.owner.id, 'revoked for the walk');
  await revokeApiToken(a.owner.id, revoked.record.id);
  Object.assign(clients, {
    anonymous: new Client(),
    'revoked token': new Client(revoked.token),
    viewer: asToken(a.viewer),
    editor: asToken(a.editor),
    owner: asToken(a.owner),
    'other archive': asToken(b.owner),
  });

  const editor = asToken(a.editor);
  const batch = await createBatch(editor, 'Walk batch');
  const [scan] = await generatedScans(1, 9100, { width: 240, height: 160 });
  const up = await upload(editor, batch, scan.name, scan.bytes);
  await waitSettled(editor, batch);
  const item = up.body.item.id as string;
  const detail = await editor.get(`/api/items/${item}`);
  const decided = await editor.post(`/api/items/${item}/decision`, { decision: 'accepted', lockVersion: detail.body.item.lockVersion });
  if (decided.status !== 200) throw new Error(`accepting the walk's print failed: ${decided.status} ${decided.text}`);
  // The export takes accepted prints once their corrected image is rendered.
  let exp = await editor.post('/api/exports', { selection: { kind: 'batch', batchId: batch } });
  for (let i = 0; i < 120 && exp.status === 409; i++) {
    await new Promise((r) => setTimeout(r, 500));
    exp = await editor.post('/api/exports', { selection: { kind: 'batch', batchId: batch } });
  }
  const suggestion = await asToken(a.viewer).post(`/api/items/${item}/suggestions`, { caption: 'Picnic by the weir' });
  const spare = await User.create({ email: `spare.${a.slug}@test.example`, name: 'Spare member' });
  const membership = await Membership.create({ archiveId: a.id, userId: spare.id, role: 'viewer' });
  const removable = await User.create({ email: `removable.${a.slug}@test.example`, name: 'Removable member' });
  const removableMembership = await Membership.create({ archiveId: a.id, userId: removable.id, role: 'viewer' });
  const invitation = await asToken(a.owner).post('/api/team/invitations', { email: `invited.${a.slug}@test.example`, role: 'viewer' });
  for (const [what, r] of [['export', exp], ['suggestion', suggestion], ['invitation', invitation]] as const) {
    if (!r.body?.id) throw new Error(`setting up the ${what} for the walk failed: ${r.status} ${r.text}`);
  }
  Object.assign(resources, {
    batch,
    item,
    export: exp.body.id,
    suggestion: suggestion.body.id,
    membership: membership.id,
    removableMembership: removableMembership.id,
    invitation: invitation.body.id,
    randomId: randomUUID(),
    version: '1',
    inviteToken: 'no-such-invitation',
  });
}, 240_000);
afterAll(() => closeDb());

async function call(principal: Principal, method: string, url: string, stream: boolean): Promise<number> {
  if (stream) {
    const headers: Record<string, string> = { accept: 'text/event-stream' };
    const token = (clients[principal] as Client).token;
    if (token) headers.authorization = `Bearer ${token}`;
    const ctl = new AbortController();
    const res = await fetch(BASE + url, { headers, signal: ctl.signal });
    ctl.abort();
    return res.status;
  }
  const realMethod = method === 'ALL' ? 'GET' : method;
  const opts = ['POST', 'PUT', 'PATCH'].includes(realMethod) ? { json: {} } : {};
  return (await clients[principal].request(realMethod, url, opts)).status;
}

/** What a principal must get: an exact status, or 'allowed' (past authorization, no server error). */
function expected(principal: Principal, rule: (typeof ROUTE_RULES)[string]): number | 'allowed' {
  if (principal === 'revoked token') return rule.tokensIgnored ? 'allowed' : 401;
  if (rule.scope === 'public') return 'allowed';
  if (principal === 'anonymous') return 401;
  // Every signed-in principal of the walk uses an API token.
  if (rule.sessionOnly) return 403;
  if (rule.scope === 'user') return 'allowed';
  if (principal === 'other archive') return rule.scope === 'archive' ? 404 : 'allowed';
  return roleAtLeast(principal as Role, rule.role!) ? 'allowed' : 403;
}

describe('authorization of every API route', () => {
  const routes = discoverRoutes();

  it('has a rule for every route and method in src/pages/api', () => {
    const missing = routes.filter((r) => !ROUTE_RULES[r.key]).map((r) => r.key);
    expect(missing, 'routes without an authorization rule in route-rules.ts').toEqual([]);
    const stale = Object.keys(ROUTE_RULES).filter((k) => !routes.some((r) => r.key === k));
    expect(stale, 'rules for routes that no longer exist').toEqual([]);
    expect(routes.length).toBeGreaterThan(30);
  });

  it('answers anonymous 401, revoked token 401, another archive 404, a low role 403, and lets the right roles through', async () => {
    const failures: string[] = [];
    for (const route of routes) {
      const rule = ROUTE_RULES[route.key];
      if (!rule) continue;
      let url = route.pattern;
      if (route.pattern.startsWith('/api/auth/')) url = '/api/auth/session';
      for (const [param, res] of Object.entries(rule.params ?? {})) url = url.replace(`[${param}]`, resources[res]);
      if (rule.query) url += `?${rule.query}`;
      for (const principal of PRINCIPALS) {
        const want = expected(principal, rule);
        const got = await call(principal, route.method, url, Boolean(rule.stream));
        const ok = want === 'allowed' ? got < 500 && got !== 401 && got !== 403 && !(rule.scope === 'archive' && got === 404) : got === want;
        if (!ok) failures.push(`${route.key} as ${principal}: expected ${want}, got ${got}`);
      }
    }
    expect(failures).toEqual([]);
  }, 240_000);
});
