/**
 * The correction's newer controls through the real server and worker: black point, overall
 * contrast, tone curves, quarter turns and crop saved as a version and rendered full size with the
 * original untouched; a correction stored before these controls still rendering; and one print's
 * correction used on chosen prints of its batch, all or nothing.
 */
import { createHash } from 'node:crypto';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AuditEvent, Correction, Item, closeDb } from '../../../db/index.ts';
import { applyCorrection, applyGeometry, buildChannelLuts, correctionSchema, geometryPlan, type Correction as CorrectionParams } from '../../../src/lib/restoration/correction.ts';
import { deltaE2000, srgbToLab } from '../../../src/lib/restoration/colour.ts';
import { requestRender } from '../../../src/lib/server/processing.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import type { Client } from '../../support/http.ts';
import { fadedScans, readyBatch, waitRendered } from './helpers.ts';

let archive: TestArchive;
let editor: Client;
let viewer: Client;
let items: { id: string; seq: number }[];
let otherBatchItem: string;

beforeAll(async () => {
  archive = await makeArchive('review-controls');
  editor = asToken(archive.editor);
  viewer = asToken(archive.viewer);
  ({ items } = await readyBatch(editor, 'Biscuit tin, sideways scans', await fadedScans(6, 61)));
  otherBatchItem = (await readyBatch(editor, 'Album two', await fadedScans(1, 71))).items[0].id;
}, 300_000);
afterAll(closeDb);

const detail = async (id: string) => (await editor.get(`/api/items/${id}`)).body.item;
const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');

async function bytes(path: string): Promise<Buffer> {
  const res = await fetch(`${process.env.APP_URL}${path}`, { headers: { authorization: `Bearer ${archive.editor.token}` } });
  expect(res.status).toBe(200);
  return Buffer.from(await res.arrayBuffer());
}

async function rgb(jpeg: Buffer) {
  const { data, info } = await sharp(jpeg).removeAlpha().raw().toBuffer({ resolveWithObject: true });
  return { data: new Uint8Array(data.buffer, data.byteOffset, data.length), width: info.width, height: info.height };
}

/** Mean CIEDE2000 over every third pixel (the engine's CIEDE2000, checked against Sharma, Wu & Dalal 2005 in colour.test.ts). */
function meanDeltaE(a: Uint8Array, b: Uint8Array): number {
  let sum = 0;
  let n = 0;
  for (let i = 0; i < a.length; i += 9) {
    sum += deltaE2000(srgbToLab([a[i] / 255, a[i + 1] / 255, a[i + 2] / 255]), srgbToLab([b[i] / 255, b[i + 1] / 255, b[i + 2] / 255]));
    n++;
  }
  return sum / n;
}

/** The engine's result for `params` on the decoded original, worked out here from its parts. */
async function expectedRender(itemId: string, params: CorrectionParams) {
  const original = await rgb(await bytes(`/api/items/${itemId}/original`));
  const coloured = applyCorrection(original.data, 3, buildChannelLuts(params, 8, 8)) as Uint8Array;
  return applyGeometry(coloured, original.width, original.height, 3, geometryPlan(params, original.width, original.height));
}

describe('the newer controls in a saved version', () => {
  it('renders black point, contrast, tone curves, a quarter turn and a crop at full size, the original unchanged', async () => {
    const id = items[0].id;
    const seen = await detail(id);
    const originalBefore = sha256(await bytes(`/api/items/${id}/original`));
    const params: CorrectionParams = {
      ...seen.current,
      blackPoint: [0.08, 0.08, 0.08],
      contrast: 1.2,
      toneCurves: { red: [[0, 0], [0.25, 0.22], [0.5, 0.46], [0.75, 0.74], [1, 1]], blue: [[0, 0], [0.5, 0.55], [1, 1]] },
      geometry: { quarterTurns: 1, crop: { x: 0.05, y: 0.1, width: 0.9, height: 0.8 } },
    };
    const r = await editor.post(`/api/items/${id}/corrections`, { params, basedOnVersion: seen.currentVersion });
    expect(r.status).toBe(202);
    expect(r.body.item.current).toEqual(correctionSchema.parse(params));
    await waitRendered(editor, id, r.body.version);

    const render = await rgb(await bytes(`/api/items/${id}/corrected`));
    // 600 x 400 turned a quarter is 400 x 600; the crop keeps 90 % of the width and 80 % of the height
    expect([render.width, render.height]).toEqual([360, 480]);
    const expected = await expectedRender(id, params);
    expect([expected.width, expected.height]).toEqual([render.width, render.height]);
    const dE = meanDeltaE(render.data, expected.data);
    console.log(`full-size render with the newer controls vs the engine's parts: mean ΔE00 ${dE.toFixed(3)}`);
    // only the render's JPEG encoding (quality 92) stands between the two
    expect(dE).toBeLessThan(1);
    expect(sha256(await bytes(`/api/items/${id}/original`))).toBe(originalBefore);
    // the corrected small copies are turned too: taller than wide
    const thumb = await sharp(await bytes(`/api/items/${id}/thumbnail?of=corrected`)).metadata();
    expect(thumb.height!).toBeGreaterThan(thumb.width!);
    // and so is the whole corrected print served reduced (a region stays in the upright scan's pixels)
    const whole = await sharp(await bytes(`/api/items/${id}/crop?of=corrected&max=300`)).metadata();
    expect([whole.width, whole.height]).toEqual([180, 240]);
    const region = await sharp(await bytes(`/api/items/${id}/crop?of=corrected&x=0&y=0&w=100&h=50`)).metadata();
    expect([region.width, region.height]).toEqual([100, 50]);
  });

  it('refuses a tone curve that goes down and a crop outside the scan, saving nothing', async () => {
    const id = items[1].id;
    const seen = await detail(id);
    const down = await editor.post(`/api/items/${id}/corrections`, { params: { ...seen.current, toneCurves: { green: [[0, 0.4], [1, 0.3]] } }, basedOnVersion: seen.currentVersion });
    expect(down.status).toBe(400);
    const outside = await editor.post(`/api/items/${id}/corrections`, { params: { ...seen.current, geometry: { quarterTurns: 0, crop: { x: 0.6, y: 0, width: 0.6, height: 1 } } }, basedOnVersion: seen.currentVersion });
    expect(outside.status).toBe(400);
    expect(await Correction.count({ where: { itemId: id } })).toBe(seen.corrections.length);
  });

  it('still renders a correction stored before the newer controls, as it rendered then', async () => {
    const id = items[1].id;
    const seen = await detail(id);
    // as the engine stored corrections before the newer fields (values invented for the test)
    const stored = { version: 1, whitePoint: [0.95, 0.9, 0.78], curves: { red: { densityGain: 1.3 }, green: { densityGain: 1.05 }, blue: { densityGain: 1 } }, strength: 0.9 };
    const version = seen.corrections.length + 1;
    await Correction.create({ itemId: id, version, params: stored, origin: 'operator', createdBy: archive.editor.id });
    await Item.update({ currentVersion: version }, { where: { id } });
    await requestRender(id, version);
    const after = await waitRendered(editor, id, version);
    expect(after.current).toEqual(stored);
    const render = await rgb(await bytes(`/api/items/${id}/corrected`));
    expect([render.width, render.height]).toEqual([600, 400]);
    const expected = await expectedRender(id, correctionSchema.parse(stored));
    expect(meanDeltaE(render.data, expected.data)).toBeLessThan(1);
  });
});

describe('using one print\u2019s correction on chosen prints of its batch', () => {
  it('gives each chosen print a new version with the colour settings, keeps their own turn, and leaves the others', async () => {
    const [source, a, b, untouched] = [items[2], items[3], items[4], items[5]];
    // a has a quarter turn of its own, which the copy must keep
    const aSeen = await detail(a.id);
    const own = await editor.post(`/api/items/${a.id}/corrections`, { params: { ...aSeen.current, geometry: { quarterTurns: 3 } }, basedOnVersion: aSeen.currentVersion });
    expect(own.status).toBe(202);
    const sSeen = await detail(source.id);
    const params: CorrectionParams = { ...sSeen.current, contrast: 1.15, blackPoint: [0.05, 0.05, 0.05], geometry: { quarterTurns: 1 } };
    const saved = await editor.post(`/api/items/${source.id}/corrections`, { params, basedOnVersion: sSeen.currentVersion });
    expect(saved.status).toBe(202);
    const untouchedBefore = await detail(untouched.id);

    const r = await editor.post(`/api/items/${source.id}/corrections/copies`, { to: [b.id, a.id], fromVersion: saved.body.version });
    expect(r.status).toBe(202);
    expect(r.body.from).toEqual({ id: source.id, version: saved.body.version });
    expect(r.body.copied.map((c: { seq: number }) => c.seq)).toEqual([a.seq, b.seq]);

    const { geometry: _g, ...colour } = correctionSchema.parse(params);
    const aAfter = await detail(a.id);
    expect(aAfter.current).toEqual({ ...colour, geometry: { quarterTurns: 3 } });
    expect(aAfter.corrections.at(-1).origin).toBe('operator');
    const bAfter = await detail(b.id);
    expect(bAfter.current).toEqual(colour);
    expect(await detail(untouched.id)).toMatchObject({ currentVersion: untouchedBefore.currentVersion, lockVersion: untouchedBefore.lockVersion });
    const audits = await AuditEvent.findAll({ where: { action: 'correction.copy', subjectId: [a.id, b.id] } });
    expect(audits).toHaveLength(2);
    expect((audits[0].details as { copiedFrom: { itemId: string } }).copiedFrom.itemId).toBe(source.id);
    // and each is rendered with it
    await waitRendered(editor, b.id, bAfter.currentVersion);
    await waitRendered(editor, a.id, aAfter.currentVersion);

    // with the turns and crop asked for, they come along
    const withGeometry = await editor.post(`/api/items/${source.id}/corrections/copies`, { to: [b.id], withGeometry: true });
    expect(withGeometry.status).toBe(202);
    expect((await detail(b.id)).current.geometry).toEqual({ quarterTurns: 1 });
  });

  it('refuses, saving nothing anywhere: a viewer, a print of another batch, the print itself, a stale version, a print named twice', async () => {
    const [source, a, b] = [items[2], items[3], items[4]];
    const versions = async () => Promise.all([source, a, b].map(async (x) => (await Correction.count({ where: { itemId: x.id } })) + ':' + (await detail(x.id)).currentVersion));
    const otherBefore = await Correction.count({ where: { itemId: otherBatchItem } });
    const before = await versions();
    const current = (await detail(source.id)).currentVersion;

    const byViewer = await viewer.post(`/api/items/${source.id}/corrections/copies`, { to: [a.id] });
    expect(byViewer.status).toBe(403);
    const otherBatch = await editor.post(`/api/items/${source.id}/corrections/copies`, { to: [a.id, otherBatchItem] });
    expect(otherBatch.status).toBe(400);
    expect(otherBatch.body.error.fields.to).toBe(otherBatchItem);
    const itself = await editor.post(`/api/items/${source.id}/corrections/copies`, { to: [source.id, b.id] });
    expect(itself.status).toBe(400);
    const stale = await editor.post(`/api/items/${source.id}/corrections/copies`, { to: [a.id], fromVersion: current - 1 });
    expect(stale.status).toBe(409);
    expect(stale.body.error.code).toBe('stale_correction');
    const twice = await editor.post(`/api/items/${source.id}/corrections/copies`, { to: [a.id, a.id] });
    expect(twice.status).toBe(400);
    const none = await editor.post(`/api/items/${source.id}/corrections/copies`, { to: [] });
    expect(none.status).toBe(400);

    expect(await versions()).toEqual(before);
    expect(await Correction.count({ where: { itemId: otherBatchItem } })).toBe(otherBefore);
  });
});
