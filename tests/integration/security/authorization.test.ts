import { randomUUID } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { QueryTypes } from 'sequelize';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, db, Membership, User } from '../../../db/index.ts';
import { roleAtLeast, type Role } from '../../../src/lib/auth/roles.ts';
import { createApiToken, revokeApiToken } from '../../../src/lib/server/api-tokens.ts';
import { asToken, makeArchive } from '../../support/fixtures.ts';
import { BASE, Client } from '../../support/http.ts';
import { createBatch, generatedScans, sha256, upload, waitSettled } from '../../support/scans.ts';
import { ROUTE_CALLS, type CallContext, type Principal, type Reply, type RouteCall, type WalkResources } from './route-calls.ts';
import { ROUTE_RULES } from './route-rules.ts';

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

const PRINCIPALS: Principal[] = ['anonymous', 'revoked token', 'other archive', 'viewer', 'editor', 'owner'];

let r: WalkResources;
const tokens = {} as Record<Principal, string | undefined>;
let editor: Client;

beforeAll(async () => {
  const [a, b] = await Promise.all([makeArchive('walk-a'), makeArchive('walk-b')]);
  const revoked = await createApiToken(a.owner.id, 'revoked for the walk');
  await revokeApiToken(a.owner.id, revoked.record.id);
  Object.assign(tokens, { anonymous: undefined, 'revoked token': revoked.token, viewer: a.viewer.token, editor: a.editor.token, owner: a.owner.token, 'other archive': b.owner.token });

  editor = asToken(a.editor);
  const batch = await createBatch(editor, 'Walk batch');
  const moveTarget = await createBatch(editor, 'Walk batch to move to');
  const removableBatch = await createBatch(editor, 'Walk batch to remove');
  const scans = await generatedScans(3, 9100, { width: 240, height: 160 });
  const [item, rescanItem, removalItem] = await Promise.all(
    scans.map(async (s) => {
      const up = await upload(editor, batch, s.name, s.bytes);
      if (up.status !== 201) throw new Error(`uploading the walk's print answered ${up.status}: ${up.text}`);
      return up.body.item.id as string;
    }),
  );
  await waitSettled(editor, batch);
  const detail = await editor.get(`/api/items/${item}`);
  const decided = await editor.post(`/api/items/${item}/decision`, { decision: 'accepted', lockVersion: detail.body.item.lockVersion });
  if (![200, 202].includes(decided.status)) throw new Error(`accepting the walk's print failed: ${decided.status} ${decided.text}`);
  // The export takes accepted prints once their corrected image is rendered.
  let exp = await editor.post('/api/exports', { selection: { kind: 'batch', batchId: batch } });
  for (let i = 0; i < 120 && exp.status === 409; i++) {
    await new Promise((res) => setTimeout(res, 500));
    exp = await editor.post('/api/exports', { selection: { kind: 'batch', batchId: batch } });
  }
  if (!exp.body?.id) throw new Error(`setting up the export for the walk failed: ${exp.status} ${exp.text}`);
  const viewer = asToken(a.viewer);
  const suggest = async () => {
    const s = await viewer.post(`/api/items/${item}/suggestions`, { caption: 'Picnic by the weir' });
    if (!s.body?.id) throw new Error(`setting up a suggestion failed: ${s.status} ${s.text}`);
    return s.body.id as string;
  };
  const spare = await User.create({ email: `spare.${a.slug}@test.example`, name: 'Spare member' });
  const membership = await Membership.create({ archiveId: a.id, userId: spare.id, role: 'viewer' });
  const removable = await User.create({ email: `removable.${a.slug}@test.example`, name: 'Removable member' });
  const removableMembership = await Membership.create({ archiveId: a.id, userId: removable.id, role: 'viewer' });
  const invitation = await asToken(a.owner).post('/api/team/invitations', { email: `invited.${a.slug}@test.example`, role: 'viewer' });
  if (!invitation.body?.id) throw new Error(`setting up the invitation failed: ${invitation.status} ${invitation.text}`);
  const sheet = await editor.post(`/api/batches/${batch}/sheets`, { scope: 'all' });
  if (!sheet.body?.id) throw new Error(`setting up the contact sheet failed: ${sheet.status} ${sheet.text}`);
  let seed = 9200;
  r = {
    a,
    b,
    batch,
    item,
    rescanItem,
    removalItem,
    removableBatch,
    moveTarget,
    itemSha256: sha256(scans[0].bytes),
    export: exp.body.id,
    suggestions: { editor: await suggest(), owner: await suggest(), refused: await suggest() },
    membership: membership.id,
    removableMembership: removableMembership.id,
    invitation: invitation.body.id,
    randomId: randomUUID(),
    version: '1',
    inviteToken: 'no-such-invitation',
    sheet: sheet.body.id,
    freshScan: async () => (await generatedScans(1, seed++, { width: 240, height: 160 }))[0].bytes,
  };
  await untilQuiet();
}, 300_000);
afterAll(() => closeDb());

/**
 * The rows of the walk's two archives, table by table, as one hash each: every table of the
 * schema that names an archive, a batch, an item or a member. API tokens' last use (and with it
 * their updated_at) is left out: a token call sets it, refused or not.
 */
let fingerprintSql: string | undefined;
async function fingerprint(): Promise<Map<string, string>> {
  if (!fingerprintSql) {
    const columns = await db().query<{ table_name: string; column_name: string }>(
      "SELECT table_name, column_name FROM information_schema.columns WHERE table_schema = 'public' ORDER BY table_name",
      { type: QueryTypes.SELECT },
    );
    const byTable = new Map<string, Set<string>>();
    for (const c of columns) (byTable.get(c.table_name) ?? byTable.set(c.table_name, new Set()).get(c.table_name)!).add(c.column_name);
    const archives = `archive_id IN (:a, :b)`;
    const batches = `SELECT id FROM batches WHERE ${archives}`;
    const members = `SELECT user_id FROM memberships WHERE ${archives}`;
    const parts: string[] = [];
    for (const [table, cols] of byTable) {
      let where: string | null = null;
      if (table === 'archives') where = 'id IN (:a, :b)';
      else if (table === 'users') where = `id IN (${members}) OR email LIKE :likeA OR email LIKE :likeB`;
      else if (cols.has('archive_id')) where = archives;
      else if (cols.has('batch_id')) where = `batch_id IN (${batches})`;
      else if (cols.has('item_id')) where = `item_id IN (SELECT id FROM items WHERE batch_id IN (${batches}))`;
      else if (cols.has('user_id')) where = `user_id IN (${members})`;
      if (!where) continue;
      const row = table === 'api_tokens' ? `to_jsonb(r) - 'last_used_at' - 'updated_at'` : 'to_jsonb(r)';
      parts.push(`SELECT '${table}' AS t, md5(coalesce(string_agg(x, '|' ORDER BY x), '')) AS h FROM (SELECT (${row})::text AS x FROM "${table}" r WHERE ${where}) s`);
    }
    fingerprintSql = parts.join(' UNION ALL ');
  }
  const rows = await db().query<{ t: string; h: string }>(fingerprintSql, {
    replacements: { a: r.a.id, b: r.b.id, likeA: `%${r.a.slug}%`, likeB: `%${r.b.slug}%` },
    type: QueryTypes.SELECT,
  });
  return new Map(rows.map((x) => [x.t, x.h]));
}

const changedTables = (before: Map<string, string>, after: Map<string, string>) => [...before.keys()].filter((t) => before.get(t) !== after.get(t));

/**
 * Waits until nothing is under way for the walk's archives (no print waiting for analysis or a
 * render, no export running, no queued job naming one of their batches or prints) and their rows
 * stay the same for 1.5 s, so that a refused call is compared with a still picture.
 */
async function untilQuiet(timeoutMs = 120_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  let last = '';
  let stableSince = 0;
  while (Date.now() < deadline) {
    const [{ busy }] = await db().query<{ busy: string }>(
      `WITH ids AS (SELECT id::text AS id FROM batches WHERE archive_id IN (:a, :b)
                    UNION ALL SELECT i.id::text FROM items i JOIN batches b ON b.id = i.batch_id WHERE b.archive_id IN (:a, :b)
                    UNION ALL SELECT unnest(ARRAY[:a, :b]::text[]))
       SELECT (SELECT count(*) FROM items i JOIN batches b ON b.id = i.batch_id WHERE b.archive_id IN (:a, :b) AND i.deleted_at IS NULL
                 AND (i.state IN ('queued', 'analysing') OR (i.state = 'ready' AND i.current_version IS NOT NULL AND (i.render_version IS NULL OR i.render_version < i.current_version))))
            + (SELECT count(*) FROM exports WHERE archive_id IN (:a, :b) AND state IN ('queued', 'running'))
            + (SELECT count(*) FROM pgboss.job j WHERE j.state IN ('created', 'retry', 'active') AND j.start_after < now() + interval '30 seconds'
                 AND EXISTS (SELECT 1 FROM ids WHERE strpos(j.data::text, ids.id) > 0)) AS busy`,
      { replacements: { a: r.a.id, b: r.b.id }, type: QueryTypes.SELECT },
    );
    const now = JSON.stringify([...(await fingerprint())]);
    if (Number(busy) === 0 && now === last) {
      if (Date.now() - stableSince >= 1500) return;
    } else stableSince = Date.now();
    last = now;
    await new Promise((res) => setTimeout(res, 250));
  }
  throw new Error('the walk archives did not come to rest');
}

/** True when a file named by these bytes' SHA-256 is in storage (keys of stored scans carry it). */
function storedFile(sha: string, dir = process.env.STORAGE_DIR!): boolean {
  for (const e of fs.readdirSync(dir, { withFileTypes: true })) {
    if (e.isDirectory() ? storedFile(sha, path.join(dir, e.name)) : e.name.includes(sha)) return true;
  }
  return false;
}

async function send(principal: Principal, method: string, url: string, request: { json?: unknown; body?: Buffer; headers?: Record<string, string> }, stream: boolean): Promise<Reply> {
  const headers: Record<string, string> = { accept: stream ? 'text/event-stream' : 'application/json', origin: BASE, ...(request.headers ?? {}) };
  if (tokens[principal]) headers.authorization = `Bearer ${tokens[principal]}`;
  let body: BodyInit | undefined = request.body as unknown as BodyInit | undefined;
  if (request.json !== undefined) {
    headers['content-type'] = 'application/json';
    body = JSON.stringify(request.json);
  }
  const ctl = new AbortController();
  const res = await fetch(BASE + url, { method, headers, body, redirect: 'manual', signal: ctl.signal });
  if (stream) {
    ctl.abort();
    return { status: res.status, headers: res.headers, body: null, text: '', raw: Buffer.alloc(0) };
  }
  const raw = Buffer.from(await res.arrayBuffer());
  const text = raw.toString('utf8');
  let parsed: any = null;
  try {
    parsed = text && (res.headers.get('content-type') ?? '').includes('json') ? JSON.parse(text) : null;
  } catch {
    /* not JSON */
  }
  return { status: res.status, headers: res.headers, body: parsed, text, raw };
}

/** What a principal must get: an exact status, or 'allowed' (past authorization). */
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

function resolveParams(pattern: string, params: Record<string, string>, principal: Principal): string {
  let url = pattern;
  for (const [param, res] of Object.entries(params)) {
    const value = (r as unknown as Record<string, unknown>)[res];
    const id = typeof value === 'string' ? value : (value as Record<string, string>)[principal === 'editor' || principal === 'owner' ? principal : 'refused'];
    url = url.replace(`[${param}]`, id);
  }
  return url;
}

describe('authorization of every API route', () => {
  const routes = discoverRoutes();

  it('has a rule for every route and method in src/pages/api, and a checked valid call for every route someone may call', () => {
    const missing = routes.filter((x) => !ROUTE_RULES[x.key]).map((x) => x.key);
    expect(missing, 'routes without an authorization rule in route-rules.ts').toEqual([]);
    const stale = Object.keys(ROUTE_RULES).filter((k) => !routes.some((x) => x.key === k));
    expect(stale, 'rules for routes that no longer exist').toEqual([]);
    const unchecked = routes.filter((x) => ROUTE_RULES[x.key] && PRINCIPALS.some((p) => expected(p, ROUTE_RULES[x.key]) === 'allowed') && !ROUTE_CALLS[x.key]).map((x) => x.key);
    expect(unchecked, 'routes without a valid call in route-calls.ts').toEqual([]);
    expect(routes.length).toBeGreaterThan(30);
  });

  it('refuses anonymous 401, revoked token 401, another archive 404 and a low role 403 changing no row and storing no file, and gives the right roles the data they asked for', async () => {
    const failures: string[] = [];
    for (const route of routes) {
      const rule = ROUTE_RULES[route.key];
      if (!rule) continue;
      const spec: RouteCall | undefined = ROUTE_CALLS[route.key];
      const method = route.method === 'ALL' ? 'GET' : route.method;
      for (const principal of PRINCIPALS) {
        const want = expected(principal, rule);
        if (want === 'allowed' && !spec) continue; // reported by the test above
        const c: CallContext = { r, principal, editor };
        let url = route.pattern.startsWith('/api/auth/') ? '/api/auth/session' : resolveParams(route.pattern, { ...(rule.params ?? {}), ...(spec?.params ?? {}) }, principal);
        if (rule.query) url += `?${rule.query}`;
        const request = spec?.request ? await spec.request(c) : ['POST', 'PUT', 'PATCH'].includes(method) ? { json: {} } : {};
        const label = `${route.key} as ${principal}`;
        if (want === 'allowed') {
          const reply = await send(principal, method, url, request, Boolean(rule.stream));
          const status = typeof spec!.status === 'function' ? spec!.status(c) : spec!.status;
          if (!(Array.isArray(status) ? status : [status]).includes(reply.status)) failures.push(`${label}: expected ${JSON.stringify(status)}, got ${reply.status} ${reply.text.slice(0, 200)}`);
          else {
            try {
              await spec!.check(reply, c);
            } catch (err) {
              failures.push(`${label}: the answer's data is wrong: ${(err as Error).message.split('\n')[0]}`);
            }
          }
          if (spec!.background) await untilQuiet();
          continue;
        }
        // A request made with a change of its own (undo's bulk decision) waits for the work that change started.
        if (spec?.background && spec.request) await untilQuiet();
        const before = await fingerprint();
        const reply = await send(principal, method, url, request, Boolean(rule.stream));
        const changed = changedTables(before, await fingerprint());
        if (reply.status !== want) failures.push(`${label}: expected ${want}, got ${reply.status}`);
        else if (!rule.stream && !reply.body?.error?.code) failures.push(`${label}: the refusal is not in the JSON error shape: ${reply.text.slice(0, 120)}`);
        if (changed.length) failures.push(`${label}: refused, yet changed rows of ${changed.join(', ')}`);
        if (request.body && storedFile(sha256(request.body))) failures.push(`${label}: refused, yet the bytes it sent were stored`);
      }
    }
    expect(failures).toEqual([]);
  }, 600_000);
});
