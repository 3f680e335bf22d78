/**
 * For the authorization walk: a valid call of each API route and what its answer must hold. Every
 * principal sends the same valid request, so a refusal is the authorization's and not a validation
 * error; an allowed principal's answer must be the route's real success (or the one answer the
 * route gives its resource, named by status and error code) with the data checked, never just
 * "below 500". A route with an allowed principal and no entry here fails the walk.
 */
import { createHash } from 'node:crypto';
import { expect } from 'vitest';
import type { Client } from '../../support/http.ts';
import type { TestArchive } from '../../support/fixtures.ts';

/** An answer as the walk reads it: JSON parsed when it is JSON, and the raw bytes. */
export interface Reply {
  status: number;
  headers: Headers;
  body: any;
  text: string;
  raw: Buffer;
}

export type Principal = 'anonymous' | 'revoked token' | 'viewer' | 'editor' | 'owner' | 'other archive';

/** What the walk made before it started (ids), and the scans whose bytes a download must return. */
export interface WalkResources {
  a: TestArchive;
  b: TestArchive;
  batch: string;
  item: string;
  /** A print of its own for rescans, which re-analyse it, and for moves. */
  rescanItem: string;
  /** A print the walk removes, and an empty batch it removes and restores. */
  removalItem: string;
  removableBatch: string;
  /** Another batch of archive a, to move a print to. */
  moveTarget: string;
  itemSha256: string;
  export: string;
  /** Pending suggestions: one for each principal allowed to decide one, and one for the refused. */
  suggestions: { editor: string; owner: string; refused: string };
  membership: string;
  removableMembership: string;
  invitation: string;
  randomId: string;
  version: string;
  inviteToken: string;
  /** A contact sheet of the walk's batch, holding its print. */
  sheet: string;
  /** New scans (bytes) for uploads and rescans, one per call. */
  freshScan(): Promise<Buffer>;
}

export interface CallContext {
  r: WalkResources;
  principal: Principal;
  /** An editor of archive a, for looking things up (lock versions) whoever the principal is. */
  editor: Client;
}

export interface RouteCall {
  /** Resources to put in the URL, when other than route-rules.ts's. */
  params?: Record<string, keyof WalkResources>;
  /** The valid request: a JSON body, or raw bytes with headers. */
  request?: (c: CallContext) => Promise<{ json?: unknown; body?: Buffer; headers?: Record<string, string> }> | { json?: unknown; body?: Buffer; headers?: Record<string, string> };
  /** The status of an allowed call. */
  status: number | number[] | ((c: CallContext) => number | number[]);
  /** Checks the data of an allowed call's answer. */
  check: (reply: Reply, c: CallContext) => void | Promise<void>;
  /** The allowed call starts work in the background (analysis, renders, an export): the walk waits until it is done. */
  background?: boolean;
}

const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');
const isJpeg = (reply: Reply) => {
  expect(reply.headers.get('content-type')).toContain('image/jpeg');
  expect(reply.raw.subarray(0, 2).toString('hex')).toBe('ffd8');
};
const errorCode = (code: string) => (reply: Reply) => expect(reply.body?.error?.code).toBe(code);
const lockVersionOf = async (c: CallContext, item: string) => ((await c.editor.get(`/api/items/${item}`)).body.item.lockVersion as number);
const ownSlug = (c: CallContext) => (c.principal === 'other archive' ? c.r.b.slug : c.r.a.slug);
const ownEmail = (c: CallContext) => ({ viewer: c.r.a.viewer.email, editor: c.r.a.editor.email, owner: c.r.a.owner.email, 'other archive': c.r.b.owner.email })[c.principal as 'viewer'];

export const ROUTE_CALLS: Record<string, RouteCall> = {
  'ALL /api/auth/[...auth]': { status: 200, check: (r) => expect(r.headers.get('content-type')).toContain('application/json') },
  'GET /api/me': {
    status: 200,
    check: (r, c) => {
      expect(r.body.user.email).toBe(ownEmail(c));
      expect(r.body.current).toBe(ownSlug(c));
    },
  },
  'POST /api/session/archive': { request: (c) => ({ json: { slug: ownSlug(c) } }), status: 200, check: (r, c) => expect(r.body).toEqual({ slug: ownSlug(c) }) },
  'PATCH /api/archive': { request: () => ({ json: { timeZone: 'Europe/Dublin' } }), status: 200, check: (r) => expect(r.body.timeZone).toBe('Europe/Dublin') },
  'POST /api/session/signout': { status: 204, check: (r) => expect(r.text).toBe('') },
  'POST /api/invitations/[token]': { request: () => ({ json: { name: 'Nobody', password: 'a long enough password' } }), status: 404, check: errorCode('not_found') },
  'GET /api/tokens': { status: 200, check: (r) => expect(r.body.tokens.length).toBeGreaterThan(0) },
  'DELETE /api/tokens/[id]': { status: 404, check: errorCode('not_found') },

  'GET /api/team': { status: 200, check: (r, c) => expect(r.body.members.map((m: { email: string }) => m.email)).toContain(c.principal === 'other archive' ? c.r.b.owner.email : c.r.a.owner.email) },
  'POST /api/team/invitations': {
    request: (c) => ({ json: { email: `walk-invite.${c.principal.replace(' ', '-')}.${c.r.a.slug}@test.example`, role: 'viewer' } }),
    status: 201,
    check: (r, c) => expect(r.body.email).toBe(`walk-invite.${c.principal.replace(' ', '-')}.${c.r.a.slug}@test.example`),
  },
  'DELETE /api/team/invitations/[id]': { status: 204, check: (r) => expect(r.text).toBe('') },
  'PATCH /api/team/members/[id]': { request: () => ({ json: { role: 'editor' } }), status: 200, check: (r) => expect(r.body.role).toBe('editor') },
  'DELETE /api/team/members/[id]': { status: 204, check: (r) => expect(r.text).toBe('') },

  'GET /api/batches': {
    status: 200,
    check: (r, c) => {
      expect(r.body.archive).toBe(ownSlug(c));
      const ids = r.body.batches.map((b: { id: string }) => b.id);
      if (c.principal === 'other archive') expect(ids).not.toContain(c.r.batch);
      else expect(ids).toContain(c.r.batch);
    },
  },
  'POST /api/batches': {
    request: (c) => ({ json: { name: `Walk batch of the ${c.principal}`, sourceKind: 'box' } }),
    status: 201,
    check: (r, c) => {
      expect(r.body.name).toBe(`Walk batch of the ${c.principal}`);
      expect(r.headers.get('location')).toBe(`/api/batches/${r.body.id}`);
    },
  },
  'GET /api/batches/[id]': { status: 200, check: (r, c) => expect(r.body.id).toBe(c.r.batch) },
  'GET /api/batches/[id]/events': { status: 200, check: (r) => expect(r.headers.get('content-type')).toContain('text/event-stream') },
  'GET /api/batches/events': { status: 200, check: (r) => expect(r.headers.get('content-type')).toContain('text/event-stream') },
  'POST /api/batches/[id]/files': {
    request: async (c) => ({ body: await c.r.freshScan(), headers: { 'content-type': 'application/octet-stream', 'x-file-name': `walk-${c.principal}.jpg` } }),
    status: 201,
    check: (r) => expect([r.body.outcome, r.headers.get('location')]).toEqual(['added', `/api/items/${r.body.item.id}`]),
    background: true,
  },
  'GET /api/batches/[id]/items': { status: 200, check: (r, c) => expect(r.body.items.map((i: { id: string }) => i.id)).toContain(c.r.item) },
  'POST /api/batches/[id]/decisions': {
    request: async (c) => ({ json: { decision: 'accepted', items: [{ id: c.r.item, lockVersion: await lockVersionOf(c, c.r.item) }] } }),
    status: 200,
    check: (r) => expect(JSON.stringify(r.body)).toContain('accepted'),
    background: true,
  },
  'GET /api/batches/[id]/metadata': { status: 200, check: (r, c) => expect(r.body.items.map((i: { id: string }) => i.id)).toContain(c.r.item) },
  // the walk's batch holds no backs: a call past authorization finds none
  'GET /api/batches/[id]/backs': { status: 200, check: (r) => expect(r.body.backs).toEqual([]) },
  'POST /api/batches/[id]/backs': { request: (c) => ({ json: { backId: c.r.randomId, printId: c.r.item } }), status: 404, check: errorCode('not_found') },
  'GET /api/batches/[id]/backs/[back]': { status: 404, check: errorCode('not_found') },
  'PATCH /api/batches/[id]/metadata': {
    request: (c) => ({ json: { itemIds: [c.r.item], set: { place: `By the weir (${c.principal})` } } }),
    status: 200,
    check: async (r, c) => expect((await c.editor.get(`/api/items/${c.r.item}/metadata`)).body.place).toBe(`By the weir (${c.principal})`),
  },

  'POST /api/batches/[id]/decisions/undo': {
    // Each call undoes a bulk decision made just before it (so the prints have not been decided since).
    request: async (c) => {
      const bulk = await c.editor.post(`/api/batches/${c.r.batch}/decisions`, { decision: 'accepted', items: [{ id: c.r.item, lockVersion: await lockVersionOf(c, c.r.item) }] });
      return { json: { bulkId: bulk.body.bulkId } };
    },
    status: 200,
    check: (r, c) => expect(JSON.stringify(r.body.decided)).toContain(c.r.item),
    background: true,
  },
  'GET /api/batches/[id]/removal': { status: 200, check: (r, c) => expect(r.body.id).toBe(c.r.batch) },
  'POST /api/batches/[id]/removal': {
    params: { id: 'removableBatch' },
    request: () => ({ json: { confirm: true } }),
    // The first allowed caller removes it; to the next one it is gone.
    status: (c) => (c.principal === 'editor' ? 200 : 404),
    check: (r, c) => (c.principal === 'editor' ? expect(JSON.stringify(r.body)).toContain(c.r.removableBatch) : errorCode('not_found')(r)),
  },
  'GET /api/removed': {
    status: 200,
    check: (r, c) => {
      expect(Array.isArray(r.body.removed)).toBe(true);
      if (c.principal === 'other archive') expect(JSON.stringify(r.body)).not.toContain(c.r.a.id);
    },
  },
  'POST /api/removed': {
    request: (c) => ({ json: { kind: 'batch', id: c.r.removableBatch } }),
    // The editor restores the batch removed above; to anyone after (or in another archive) there is nothing to restore.
    status: (c) => (c.principal === 'editor' ? 200 : [404, 409]),
    check: (r, c) => (c.principal === 'editor' ? expect(r.body.batch.id).toBe(c.r.removableBatch) : expect(r.body.error.code).toBeTruthy()),
  },
  'GET /api/items/[id]/removal': { status: 200, check: (r, c) => expect(r.body.id).toBe(c.r.item) },
  'POST /api/items/[id]/removal': {
    params: { id: 'removalItem' },
    request: () => ({ json: { confirm: true } }),
    status: (c) => (c.principal === 'editor' ? 200 : 404),
    check: (r, c) => (c.principal === 'editor' ? expect(JSON.stringify(r.body)).toContain(c.r.removalItem) : errorCode('not_found')(r)),
  },
  'GET /api/items/[id]/same-picture': {
    status: 200,
    check: (r, c) => {
      expect(r.body.thisPrint.id).toBe(c.r.item);
      expect(Array.isArray(r.body.pairs)).toBe(true);
    },
  },
  'POST /api/items/[id]/same-picture': {
    // both prints stay: the pair is only marked as not the same picture (again by the owner)
    request: (c) => ({ json: { otherId: c.r.rescanItem, choice: 'keep_both' } }),
    status: 200,
    check: (r) => expect(r.body).toMatchObject({ outcome: 'kept_both', keptItemId: null, removedItemId: null }),
  },
  'POST /api/items/[id]/move': {
    params: { id: 'rescanItem' },
    // The editor moves it away, the owner moves it back.
    request: (c) => ({ json: { batchId: c.principal === 'owner' ? c.r.batch : c.r.moveTarget } }),
    status: 200,
    check: async (r, c) => expect((await c.editor.get(`/api/items/${c.r.rescanItem}`)).body.item.batchId).toBe(c.principal === 'owner' ? c.r.batch : c.r.moveTarget),
  },

  'GET /api/items/[id]': { status: 200, check: (r, c) => expect(r.body.item.id).toBe(c.r.item) },
  'GET /api/items/[id]/original': { status: 200, check: (r, c) => expect(sha256(r.raw)).toBe(c.r.itemSha256) },
  'GET /api/items/[id]/preview': { status: 200, check: isJpeg },
  'GET /api/items/[id]/thumbnail': { status: 200, check: isJpeg },
  'GET /api/items/[id]/corrected': { status: 200, check: isJpeg },
  'GET /api/items/[id]/crop': { status: 200, check: isJpeg },
  // The walk's print is ready, so a retry is refused by the print's state: past authorization.
  'POST /api/items/[id]/retry': { status: 409, check: (r) => expect(r.body.error.message).toBeTruthy() },
  'POST /api/items/[id]/decision': {
    request: async (c) => ({ json: { decision: 'accepted', lockVersion: await lockVersionOf(c, c.r.item) } }),
    status: [200, 202],
    check: (r) => expect(r.body.item.decision).toBe('accepted'),
    background: true,
  },
  'PUT /api/items/[id]/decision': {
    request: async (c) => ({ json: { decision: 'skipped', lockVersion: await lockVersionOf(c, c.r.item) } }),
    status: [200, 202],
    check: (r) => expect(r.body.item.decision).toBe('skipped'),
    background: true,
  },
  'GET /api/items/[id]/corrections': { status: 200, check: (r) => expect(r.body.versions.length).toBeGreaterThan(0) },
  'POST /api/items/[id]/corrections': {
    request: async (c) => {
      const history = (await c.editor.get(`/api/items/${c.r.item}/corrections`)).body;
      const current = history.versions.find((v: { version: number }) => v.version === history.currentVersion) ?? history.versions.at(-1);
      return { json: { params: current.params, basedOnVersion: history.currentVersion } };
    },
    status: 202,
    check: (r, c) => expect(r.body.item.id).toBe(c.r.item),
    background: true,
  },
  'POST /api/items/[id]/corrections/[version]/restore': { status: 202, check: (r) => expect(r.body.restoredFrom).toBe(1), background: true },
  'POST /api/items/[id]/corrections/copies': {
    request: (c) => ({ json: { to: [c.r.rescanItem] } }),
    status: 202,
    check: async (r, c) => {
      expect(r.body.from.id).toBe(c.r.item);
      expect(r.body.copied.map((x: { id: string }) => x.id)).toEqual([c.r.rescanItem]);
      expect((await c.editor.get(`/api/items/${c.r.rescanItem}`)).body.item.currentVersion).toBe(r.body.copied[0].version);
    },
    background: true,
  },
  'GET /api/items/[id]/metadata': { status: 200, check: (r, c) => expect(r.body.id).toBe(c.r.item) },
  'PATCH /api/items/[id]/metadata': {
    request: (c) => ({ json: { caption: `Picnic by the weir, told by the ${c.principal}` } }),
    status: 200,
    check: async (r, c) => expect((await c.editor.get(`/api/items/${c.r.item}/metadata`)).body.caption).toBe(`Picnic by the weir, told by the ${c.principal}`),
  },
  'GET /api/items/[id]/suggestions': { status: 200, check: (r) => expect(Array.isArray(r.body.suggestions)).toBe(true) },
  'POST /api/items/[id]/suggestions': {
    request: (c) => ({ json: { caption: `Suggested by the ${c.principal}` } }),
    status: 201,
    check: (r) => expect(r.headers.get('location')).toBe(`/api/suggestions/${r.body.id}`),
  },
  'POST /api/items/[id]/rescan': {
    params: { id: 'rescanItem' },
    request: async (c) => ({ body: await c.r.freshScan(), headers: { 'x-file-name': `negative-${c.principal}.jpg`, 'content-type': 'application/octet-stream' } }),
    status: 202,
    check: (r, c) => expect(r.headers.get('location')).toBe(`/api/items/${c.r.rescanItem}`),
    background: true,
  },
  'POST /api/suggestions/[id]': {
    params: { id: 'suggestions' },
    request: () => ({ json: { decision: 'accept' } }),
    status: 200,
    check: (r) => expect(r.body.state ?? r.body.suggestion?.state).toBe('accepted'),
  },
  'GET /api/people': { status: 200, check: (r) => expect(Array.isArray(r.body.people)).toBe(true) },
  'GET /api/rescans.csv': {
    status: 200,
    check: (r) => {
      expect(r.headers.get('content-type')).toContain('text/csv');
      expect(r.text.split('\n')[0]).toContain(',');
    },
  },

  'GET /api/exports': {
    status: 200,
    check: (r, c) => {
      const ids = r.body.exports.map((e: { id: string }) => e.id);
      if (c.principal === 'other archive') expect(ids).not.toContain(c.r.export);
      else expect(ids).toContain(c.r.export);
    },
  },
  'POST /api/exports': {
    request: (c) => ({ json: { selection: { kind: 'batch', batchId: c.r.batch } } }),
    // A member of another archive exports from their own archive, where this batch is not.
    status: (c) => (c.principal === 'other archive' ? 404 : 202),
    check: (r, c) => (c.principal === 'other archive' ? errorCode('not_found')(r) : expect(r.headers.get('location')).toBe(r.body.statusUrl)),
    background: true,
  },
  'GET /api/batches/[id]/sheets': { status: 200, check: (r, c) => expect(r.body.sheets.map((s: { id: string }) => s.id)).toContain(c.r.sheet) },
  'POST /api/batches/[id]/sheets': {
    request: () => ({ json: { scope: 'all', paper: 'letter' } }),
    status: 201,
    check: (r) => expect([r.headers.get('location'), r.body.paper]).toEqual([`/api/sheets/${r.body.id}`, 'letter']),
  },
  'GET /api/sheets/[id]': { status: 200, check: (r, c) => expect(r.body.prints.map((p: { itemId: string }) => p.itemId)).toContain(c.r.item) },
  'GET /api/sheets/[id]/pdf': { status: 200, check: (r) => expect([r.headers.get('content-type'), r.raw.subarray(0, 5).toString('latin1')]).toEqual(['application/pdf', '%PDF-']) },
  'POST /api/sheets/[id]/answers': {
    request: (c) => ({ json: { itemId: c.r.item, relative: `Aunt of the ${c.principal}`, where: 'By the weir' } }),
    status: 201,
    check: (r) => expect(r.headers.get('location')).toBe(`/api/suggestions/${r.body.suggestionId}`),
  },
  'GET /api/exports/[id]': { status: 200, check: (r, c) => expect([r.body.id, r.body.state]).toEqual([c.r.export, 'ready']) },
  'GET /api/exports/[id]/download': { status: 200, check: (r) => expect(r.raw.subarray(0, 2).toString()).toBe('PK') },
};
