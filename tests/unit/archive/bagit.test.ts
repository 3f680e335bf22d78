import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
  BAGIT_TXT, checkBag, decodeManifestPath, encodeManifestPath, formatBagInfo, formatManifest, parseBagInfo, parseManifest, payloadOxum,
  type BagSource,
} from '../../../src/lib/archive/bagit.ts';

const sha = (b: Buffer | string) => createHash('sha256').update(b).digest('hex');

/** A bag held in memory, built the way RFC 8493 §2 describes. */
function memoryBag(payload: Record<string, string>) {
  const files = new Map<string, Buffer>();
  for (const [p, body] of Object.entries(payload)) files.set(`data/${p}`, Buffer.from(body));
  const entries = [...files].map(([path, b]) => ({ path, sha256: sha(b) }));
  const octets = [...files.values()].reduce((s, b) => s + b.length, 0);
  files.set('bagit.txt', Buffer.from(BAGIT_TXT));
  files.set('manifest-sha256.txt', Buffer.from(formatManifest(entries)));
  files.set('bag-info.txt', Buffer.from(formatBagInfo([['Source-Organization', 'Test family'], ['Bagging-Date', '2026-12-01'], ['Payload-Oxum', payloadOxum(octets, entries.length)]])));
  const tags = ['bagit.txt', 'manifest-sha256.txt', 'bag-info.txt'].map((p) => ({ path: p, sha256: sha(files.get(p)!) }));
  files.set('tagmanifest-sha256.txt', Buffer.from(formatManifest(tags)));
  const source: BagSource = {
    list: async () => [...files].map(([path, b]) => ({ path, bytes: b.length })),
    readText: async (p) => files.get(p)!.toString('utf8'),
    sha256: async (p) => sha(files.get(p)!),
  };
  return { files, source };
}

describe('BagIt helpers (RFC 8493)', () => {
  it('tells how many payload files of the manifest it has checked, from none to all, the changed ones included', async () => {
    const { files, source } = memoryBag({ 'a.jpg': 'one', 'b.jpg': 'two', 'c.jpg': 'three' });
    files.set('data/b.jpg', Buffer.from('TWO'));
    const seen: [number, number][] = [];
    const report = await checkBag(source, (checked, listed) => {
      seen.push([checked, listed]);
    });
    expect(seen).toEqual([[0, 3], [1, 3], [2, 3], [3, 3]]);
    expect(report.changed).toEqual(['data/b.jpg']);
  });

  it('writes bagit.txt exactly as §2.1.1 gives it', () => {
    expect(BAGIT_TXT).toBe('BagIt-Version: 1.0\nTag-File-Character-Encoding: UTF-8\n');
  });

  it('percent-encodes %, CR and LF in manifest paths and decodes them back (§2.1.3)', () => {
    const odd = 'data/50% off\r\nnew.jpg';
    expect(encodeManifestPath(odd)).toBe('data/50%25 off%0D%0Anew.jpg');
    expect(decodeManifestPath(encodeManifestPath(odd))).toBe(odd);
    const text = formatManifest([{ path: odd, sha256: 'A'.repeat(64) }]);
    expect(text).toBe(`${'a'.repeat(64)} data/50%25 off%0D%0Anew.jpg\n`);
    expect(parseManifest(text)).toEqual([{ path: odd, sha256: 'a'.repeat(64) }]);
  });

  it('refuses a manifest line that is not "<sha-256> <path>"', () => {
    expect(() => parseManifest('abc data/x.jpg\n')).toThrow(/line 1/);
  });

  it('gives Payload-Oxum as octets.count and reads bag-info continuation lines', () => {
    expect(payloadOxum(12345, 3)).toBe('12345.3');
    expect(parseBagInfo('External-Description: one\n  two\nPayload-Oxum: 1.1\n')).toEqual([['External-Description', 'one two'], ['Payload-Oxum', '1.1']]);
  });

  it('passes a well-formed bag, with letters of other scripts in its names', async () => {
    const { source } = memoryBag({ '1981/Zoë am See 0001.jpg': 'jpeg bytes', 'undated/0002.jpg': 'more' });
    const r = await checkBag(source);
    expect(r).toMatchObject({ ok: true, missing: [], extra: [], changed: [], problems: [], payloadFiles: 2 });
  });

  it('catches one changed byte, one missing and one extra file, each by name', async () => {
    const { files, source } = memoryBag({ 'a.jpg': 'aaaa', 'b.jpg': 'bbbb', 'c.jpg': 'cccc' });
    files.set('data/a.jpg', Buffer.from('aaab'));
    files.delete('data/b.jpg');
    files.set('data/stray.jpg', Buffer.from('x'));
    const r = await checkBag(source);
    expect(r.ok).toBe(false);
    expect(r.changed).toEqual(['data/a.jpg']);
    expect(r.missing).toEqual(['data/b.jpg']);
    expect(r.extra).toEqual(['data/stray.jpg']);
    expect(r.problems.join(' ')).toMatch(/Payload-Oxum/);
  });

  it('catches a tag file changed after bagging through the tag manifest', async () => {
    const { files, source } = memoryBag({ 'a.jpg': 'aaaa' });
    files.set('bag-info.txt', Buffer.from(files.get('bag-info.txt')!.toString() + 'Contact-Name: someone\n'));
    const r = await checkBag(source);
    expect(r.changed).toEqual(['bag-info.txt']);
  });
});
