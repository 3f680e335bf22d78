import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, Membership } from '../../../db/index.ts';
import { asSession, asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { Client } from '../../support/http.ts';
import { waitForMail } from '../../support/outbox.ts';

let a: TestArchive;
let b: TestArchive;
beforeAll(async () => {
  [a, b] = await Promise.all([makeArchive('team-a'), makeArchive('team-b')]);
});
afterAll(() => closeDb());

const membershipOf = async (archiveId: string, userId: string) => (await Membership.findOne({ where: { archiveId, userId } }))!.id;

describe('team roles', () => {
  it('lets only owners see and change the team: anonymous 401, viewer and editor 403', async () => {
    expect((await new Client().get('/api/team')).status).toBe(401);
    expect((await asToken(a.viewer).get('/api/team')).status).toBe(403);
    expect((await asToken(a.editor).get('/api/team')).status).toBe(403);
    const ok = await asToken(a.owner).get('/api/team');
    expect(ok.status).toBe(200);
    expect(ok.body.members.map((m: { email: string }) => m.email).sort()).toEqual([a.editor.email, a.owner.email, a.viewer.email].sort());
    const editorMembership = await membershipOf(a.id, a.editor.id);
    expect((await asToken(a.editor).patch(`/api/team/members/${editorMembership}`, { role: 'owner' })).status).toBe(403);
  });

  it("answers 404 for another archive's member, never 403", async () => {
    const aViewer = await membershipOf(a.id, a.viewer.id);
    const r = await asToken(b.owner).request('DELETE', `/api/team/members/${aViewer}`);
    expect(r.status).toBe(404);
    expect(await Membership.findByPk(aViewer)).not.toBeNull();
  });

  it('keeps the last owner: neither demoted nor removed (409)', async () => {
    const ownerMembership = await membershipOf(a.id, a.owner.id);
    const demote = await asToken(a.owner).patch(`/api/team/members/${ownerMembership}`, { role: 'editor' });
    expect(demote.status).toBe(409);
    expect(demote.body.error.code).toBe('last_owner');
    expect((await asToken(a.owner).delete(`/api/team/members/${ownerMembership}`)).status).toBe(409);
    expect((await Membership.findByPk(ownerMembership))!.role).toBe('owner');
  });

  it('rejects a bad role with the field named', async () => {
    const m = await membershipOf(a.id, a.viewer.id);
    const r = await asToken(a.owner).patch(`/api/team/members/${m}`, { role: 'admin' });
    expect(r.status).toBe(400);
    expect(r.body.error.fields).toHaveProperty('role');
  });

  it('invites by e-mail; the link from the mail signs the new member in as a viewer', async () => {
    const email = `new.${a.slug}@test.example`;
    const sent = await asToken(a.owner).post('/api/team/invitations', { email, role: 'viewer' });
    expect(sent.status).toBe(201);
    const mail = await waitForMail(email, /invited/);
    const link = mail.links.find((l) => l.includes('/invite/'))!;
    const token = new URL(link).pathname.split('/').pop()!;
    const guest = new Client();
    expect((await guest.get(`/invite/${token}`, { accept: 'text/html' })).status).toBe(200);
    const short = await guest.post(`/api/invitations/${token}`, { name: 'New Cousin', password: 'short' });
    expect(short.status).toBe(400);
    expect(short.body.error.fields).toHaveProperty('password');
    const accepted = await guest.post(`/api/invitations/${token}`, { name: 'New Cousin', password: 'a long enough password' });
    expect(accepted.status).toBe(200);
    const me = await guest.get('/api/me');
    expect(me.status).toBe(200);
    expect(me.body.archives).toEqual([expect.objectContaining({ slug: a.slug, role: 'viewer' })]);
    expect((await guest.get('/api/team')).status).toBe(403);
    // An invitation works once.
    expect((await new Client().post(`/api/invitations/${token}`, { name: 'Someone', password: 'another long password' })).status).toBe(409);
  });

  it('lets a member switch between archives', async () => {
    const owner = await asSession(a.owner);
    const inviteB = await asToken(b.owner).post('/api/team/invitations', { email: a.owner.email, role: 'editor' });
    expect(inviteB.status).toBe(201);
    const mail = await waitForMail(a.owner.email, /invited/);
    const token = new URL(mail.links.find((l) => l.includes('/invite/'))!).pathname.split('/').pop()!;
    expect((await owner.post(`/api/invitations/${token}`, {})).status).toBe(200);
    const switched = await owner.post('/api/session/archive', { slug: a.slug });
    expect(switched.status).toBe(200);
    expect((await owner.get('/api/me')).body.current).toBe(a.slug);
    await owner.post('/api/session/archive', { slug: b.slug });
    expect((await owner.get('/api/me')).body.current).toBe(b.slug);
    expect((await owner.post('/api/session/archive', { slug: 'not-mine' })).status).toBe(404);
  });

  it('refuses a state-changing request from another site (CSRF)', async () => {
    const owner = await asSession(a.owner);
    const r = await owner.request('POST', '/api/tokens', { json: { name: 'x' }, headers: { origin: 'http://evil.example' } });
    expect(r.status).toBe(403);
    expect(r.body.error.code).toBe('cross_site');
  });
});
