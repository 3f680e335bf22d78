/**
 * Pairing back scans with their fronts: by the file names people and scanners give backs, then by
 * feed order for a scanner that writes front, back, front, back. File names are invented for the tests.
 */
import { describe, expect, it } from 'vitest';
import { frontStemOf, pairBacks, type FedScan } from '../../../src/lib/backs/pairing.ts';

const scan = (seq: number, name: string, looksLikeBack?: boolean): FedScan => ({ id: `s${seq}`, seq, name, looksLikeBack });

describe('back scans by name', () => {
  it('reads the front a name says it is the back of', () => {
    expect(frontStemOf('0007_back.jpg')).toBe('0007');
    expect(frontStemOf('scan_0003-b.JPG')).toBe('scan_0003');
    expect(frontStemOf('Granny at the pier reverse.tif')).toBe('Granny at the pier');
    expect(frontStemOf('IMG_0042_verso (2).png')).toBe('IMG_0042');
    expect(frontStemOf('0007.jpg')).toBeNull();
    expect(frontStemOf('bob.jpg')).toBeNull();
    expect(frontStemOf('holiday_bay.jpg')).toBeNull();
  });

  it('pairs named backs with their fronts whatever the order of the files', () => {
    const p = pairBacks([scan(1, '0007_back.jpg'), scan(2, '0008.jpg'), scan(3, '0007.jpg'), scan(4, '0008-B.jpg')]);
    expect(p.pairs).toEqual([
      { frontId: 's3', backId: 's1', by: 'name' },
      { frontId: 's2', backId: 's4', by: 'name' },
    ]);
    expect(p.unpairedBacks).toEqual([]);
  });

  it('keeps a named back whose front is not in the upload apart, to be paired by hand', () => {
    const p = pairBacks([scan(1, '0009_back.jpg'), scan(2, '0010.jpg')]);
    expect(p.pairs).toEqual([]);
    expect(p.unpairedBacks).toEqual(['s1']);
  });

  it('leaves a print whose name ends like a back alone when its picture is a photograph and no front has its name', () => {
    const p = pairBacks([scan(1, 'harbour_b.jpg', false), scan(2, 'harbour_c.jpg', false)]);
    expect(p).toEqual({ pairs: [], unpairedBacks: [] });
  });
});

describe('back scans by feed order', () => {
  it('pairs each back with the front fed just before it', () => {
    const p = pairBacks([scan(1, 'scan_0001.jpg', false), scan(2, 'scan_0002.jpg', true), scan(3, 'scan_0003.jpg', false), scan(4, 'scan_0004.jpg', true), scan(5, 'scan_0005.jpg', false)]);
    expect(p.pairs).toEqual([
      { frontId: 's1', backId: 's2', by: 'feed order' },
      { frontId: 's3', backId: 's4', by: 'feed order' },
    ]);
    expect(p.unpairedBacks).toEqual([]);
  });

  it('does not give one front two backs, nor a back to a back', () => {
    const p = pairBacks([scan(1, 'a.jpg', false), scan(2, 'b.jpg', true), scan(3, 'c.jpg', true), scan(4, 'd.jpg', true)]);
    expect(p.pairs).toEqual([{ frontId: 's1', backId: 's2', by: 'feed order' }]);
    expect(p.unpairedBacks).toEqual(['s3', 's4']);
  });

  it('pairs by name before feed order, and a front paired by name takes no other back', () => {
    const p = pairBacks([scan(1, '0001.jpg', false), scan(2, '0001_back.jpg', true), scan(3, '0002.jpg', false), scan(4, 'loose.jpg', true)]);
    expect(p.pairs).toEqual([
      { frontId: 's1', backId: 's2', by: 'name' },
      { frontId: 's3', backId: 's4', by: 'feed order' },
    ]);
  });
});
