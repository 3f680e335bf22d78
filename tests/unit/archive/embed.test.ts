import { execFile } from 'node:child_process';
import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import { afterAll, describe, expect, it } from 'vitest';
import { parsePrintDate } from '../../../src/lib/archive/edtf.ts';
import { buildExif, buildIptcFields, buildXmp, dateCreated, type EmbeddedMetadata } from '../../../src/lib/archive/embed.ts';
import { buildIptc, iptcDate, utf8Within, withIptc } from '../../../src/lib/archive/iptc.ts';
import { batchSpanFolder, folderFor } from '../../../src/lib/archive/naming.ts';
import { sourceInWords } from '../../../src/lib/archive/source.ts';
import { exiftool } from '../../support/outside-checks.ts';

const tmp = await fs.mkdtemp(path.join(os.tmpdir(), 'embed-'));
afterAll(() => fs.rm(tmp, { recursive: true, force: true }));

const meta = (over: Partial<EmbeddedMetadata> = {}): EmbeddedMetadata => ({
  caption: 'Zoë and Łukasz at the lake — 夏',
  date: parsePrintDate('1981-07'),
  place: 'Lough Arrow',
  people: ['Zoë Hartigan', 'Łukasz Brennan'],
  source: sourceInWords('other', 'Blue biscuit tin', 'Envelope "Holidays"'),
  backText: null,
  ...over,
});

/** A small JPEG as the export writes it (sharp with EXIF, XMP and ICC, then our IIM block). */
async function exported(m: EmbeddedMetadata, name: string): Promise<string> {
  const jpeg = await sharp({ create: { width: 32, height: 24, channels: 3, background: '#a08070' } })
    .withIccProfile('srgb')
    .withExif(buildExif(m))
    .withXmp(buildXmp(m))
    .jpeg({ quality: 90 })
    .toBuffer();
  const file = path.join(tmp, `${name}.jpg`);
  await fs.writeFile(file, withIptc(jpeg, buildIptcFields(m)));
  return file;
}

const run = (args: string[]) =>
  new Promise<string>((resolve, reject) => execFile('exiftool', args, (err, out) => (err ? reject(err) : resolve(out))));

describe('captions and dates embedded in an exported JPEG, read back with ExifTool', () => {
  it('carries a non-ASCII caption in XMP dc:description and in IPTC Caption-Abstract, declared UTF-8 (1:90 = ESC % G)', async () => {
    const tags = await exiftool(await exported(meta(), 'zoe'));
    expect(tags['XMP-dc:Description']).toBe('Zoë and Łukasz at the lake — 夏');
    expect(tags['IPTC:Caption-Abstract']).toBe('Zoë and Łukasz at the lake — 夏');
    // IPTC IIM 4.2 dataset 1:90: the ISO 2022 escape ESC % G announces UTF-8
    expect(tags['IPTC:CodedCharacterSet']).toBe('\u001b%G');
    expect(tags['IPTC:Keywords']).toEqual(['Zoë Hartigan', 'Łukasz Brennan', 'Lough Arrow']);
    expect(tags['IPTC:Sub-location']).toBe('Lough Arrow');
    expect(tags['ExifTool:Warning']).toBeUndefined();
  });

  it('writes the IPTC digest that tells readers the IIM and XMP agree (Metadata Working Group guidelines)', async () => {
    const file = await exported(meta(), 'digest');
    const tags = await exiftool(file);
    expect(tags['Photoshop:IPTCDigest']).toMatch(/^[0-9a-f]{32}$/);
    // ExifTool computes the MD5 of the IIM block it finds: equal when ours is right
    expect(tags['File:CurrentIPTCDigest']).toBe(tags['Photoshop:IPTCDigest']);
    const validate = await run(['-validate', '-warning', '-a', '-s', file]);
    expect(validate).toMatch(/Validate\s*: OK/);
  });

  it('puts a year-month into photoshop:DateCreated and IPTC Date Created (00 for the unknown day, IIM 4.2 2:55)', async () => {
    const tags = await exiftool(await exported(meta(), 'month'));
    // ExifTool gives dates in EXIF's colon form
    expect(tags['XMP-photoshop:DateCreated']).toBe('1981:07');
    expect(tags['IPTC:DateCreated']).toBe('1981:07:00');
    expect(tags['XMP-drawerlight:DateEDTF']).toBe('1981-07');
    expect(tags['ExifIFD:DateTimeOriginal']).toBeUndefined();
  });

  it('gives a span its start as the date and the full EDTF in our own field', async () => {
    const file = await exported(meta({ date: parsePrintDate('between 1978 and 1982') }), 'span');
    const tags = await exiftool(file);
    expect(tags['XMP-photoshop:DateCreated']).toBe(1978);
    expect(tags['IPTC:DateCreated']).toBe('1978:00:00');
    // as stored: by default ExifTool reads a field it does not know that looks like "a/b" as a fraction
    expect((await run(['-s3', '-api', 'XMPAutoConv=0', '-XMP-drawerlight:DateEDTF', file])).trim()).toBe('1978/1982');
    expect(tags['XMP-drawerlight:DateInWords']).toBe('between 1978 and 1982');
  });

  it('writes dc:source as plain text, and "Something else" reads "From: …"', async () => {
    const tags = await exiftool(await exported(meta(), 'source'));
    expect(tags['XMP-dc:Source']).toBe('From: Blue biscuit tin; Envelope "Holidays"');
    const xmp = buildXmp(meta());
    expect(xmp).toContain('<dc:source>From: Blue biscuit tin; Envelope &quot;Holidays&quot;</dc:source>');
    expect(xmp).not.toMatch(/<dc:source><rdf:Alt>/);
  });

  it('writes no date at all for an undated print', async () => {
    const tags = await exiftool(await exported(meta({ date: null, caption: 'Plain words' }), 'undated'));
    expect(tags['XMP-photoshop:DateCreated']).toBeUndefined();
    expect(tags['IPTC:DateCreated']).toBeUndefined();
    expect(tags['IPTC:Caption-Abstract']).toBe('Plain words');
  });
});

describe('the pieces of the embedding', () => {
  it('says where a print came from in plain words', () => {
    expect(sourceInWords('box', 'Shoebox 1', null)).toBe('Box: Shoebox 1');
    expect(sourceInWords('album', '', 'page 4')).toBe('Album; page 4');
    expect(sourceInWords('other', 'Blue biscuit tin', null)).toBe('From: Blue biscuit tin');
    expect(sourceInWords('other', '', null)).toBeNull();
  });

  it('cuts IIM text at a byte limit without splitting a character', () => {
    expect(utf8Within('Zoë', 3).toString('utf8')).toBe('Zo');
    expect(utf8Within('Zoë', 4).toString('utf8')).toBe('Zoë');
    // IIM 4.2: Caption-Abstract at most 2000 octets
    const iim = buildIptc({ caption: 'ë'.repeat(1500) });
    expect(iim.includes(Buffer.from('ë'.repeat(1000), 'utf8'))).toBe(true);
    expect(iim.includes(Buffer.from('ë'.repeat(1001), 'utf8'))).toBe(false);
  });

  it('writes IIM dates as CCYYMMDD with 00 for what is not known', () => {
    expect(iptcDate('1981')).toBe('19810000');
    expect(iptcDate('1981-07')).toBe('19810700');
    expect(iptcDate('1981-07-15')).toBe('19810715');
    expect(iptcDate(null)).toBeNull();
    expect(dateCreated(parsePrintDate('198X'))).toBe('1980');
  });

  it('replaces an IIM block already there instead of adding a second one', () => {
    const once = withIptc(Buffer.from([0xff, 0xd8, 0xff, 0xdb, 0x00, 0x02, 0xff, 0xd9]), { caption: 'one' });
    const twice = withIptc(once, { caption: 'two' });
    expect(twice.includes(Buffer.from('one'))).toBe(false);
    expect(twice.filter((b, i) => b === 0xff && twice[i + 1] === 0xed)).toHaveLength(1);
  });

  it("files an undated print in its batch's years when the batch has them", () => {
    const span = batchSpanFolder(parsePrintDate('1978'), parsePrintDate('1982'));
    expect(span).toBe('1978-1982');
    expect(folderFor(null, span)).toBe('1978-1982');
    expect(folderFor(null, null)).toBe('undated');
    expect(folderFor(parsePrintDate('1981'), span)).toBe('1981');
    expect(batchSpanFolder(parsePrintDate('198X'), null)).toBe('1980s');
    expect(batchSpanFolder(null, null)).toBeNull();
  });
});
