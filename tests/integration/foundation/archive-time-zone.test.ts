import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Archive, closeDb } from '../../../db/index.ts';
import { formatDay, formatWhen } from '../../../src/lib/archive/when.ts';
import { asSession, asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { batchWithPrints } from '../export/helpers.ts';

let a: TestArchive;
let other: TestArchive;
const zoneOf = async (id: string) => (await Archive.findByPk(id))!.timeZone;

beforeAll(async () => {
  a = await makeArchive('time-zone');
  other = await makeArchive('time-zone-other');
});
afterAll(() => closeDb());

describe("the archive's time zone", () => {
  it('starts as UTC and is set by an owner, for their own archive only', async () => {
    expect(await zoneOf(a.id)).toBe('UTC');
    const r = await asToken(a.owner).patch('/api/archive', { timeZone: 'Pacific/Auckland' });
    expect(r.status).toBe(200);
    expect(r.body).toEqual({ slug: a.slug, name: a.name, timeZone: 'Pacific/Auckland' });
    expect(await zoneOf(a.id)).toBe('Pacific/Auckland');
    expect(await zoneOf(other.id)).toBe('UTC');
  });

  it('is refused to editors and viewers, and to a zone that does not exist, changing nothing', async () => {
    expect((await asToken(a.editor).patch('/api/archive', { timeZone: 'Europe/Dublin' })).status).toBe(403);
    expect((await asToken(a.viewer).patch('/api/archive', { timeZone: 'Europe/Dublin' })).status).toBe(403);
    const bad = await asToken(a.owner).patch('/api/archive', { timeZone: 'Mars/Olympus' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields.timeZone).toMatch(/time zone/);
    expect(await zoneOf(a.id)).toBe('Pacific/Auckland');
  });

  it('is how the pages write dates and times, the same way everywhere', async () => {
    const invited = await asToken(a.owner).post('/api/team/invitations', { email: `zone.${Date.now()}@test.example`, role: 'viewer' });
    expect(invited.status).toBe(201);
    const team = await (await asSession(a.owner)).get('/team', { accept: 'text/html' });
    expect(team.status).toBe(200);
    // the invitation's end, as a day in Auckland (the island's first render comes from the server)
    // (React's server render puts <!-- --> between the pieces of a text)
    expect(team.text.replace(/<!-- -->/g, '')).toContain(`until ${formatDay(invited.body.expiresAt, 'Pacific/Auckland')}`);
    const settings = await (await asSession(a.viewer)).get('/settings', { accept: 'text/html' });
    expect(settings.text).toContain('Pacific/Auckland');
    expect(settings.text).toContain('An owner of the archive can change it.');
  });

  it('names the zone in a conflict message, written as everywhere else', async () => {
    const { itemIds } = await batchWithPrints(asToken(a.editor), 'Zone box', 1, 121);
    const seen = (await asToken(a.owner).get(`/api/items/${itemIds[0]}/metadata`)).body.lockVersion;
    const first = await asToken(a.editor).post(`/api/items/${itemIds[0]}/decision`, { decision: 'accepted', lockVersion: seen });
    expect(first.status).toBe(200);
    const later = await asToken(a.owner).post(`/api/items/${itemIds[0]}/decision`, { decision: 'skipped', lockVersion: seen });
    expect(later.status).toBe(409);
    expect(later.body.error.message).toContain(`on ${formatWhen(first.body.item.decidedAt, 'Pacific/Auckland')} (Pacific/Auckland)`);
  });
});
