import { describe, expect, it } from 'vitest';
import { ArchiveSite } from '../../../src/lib/archive/html-archive.ts';

// Invented for the test: four prints of an imagined family
function site() {
  const s = new ArchiveSite({ archiveName: 'Hartigan family', madeBy: 'Máire', madeAt: new Date('2026-12-03T10:00:00Z'), exportId: 'e-1', includeOriginals: false });
  s.add({ photoPath: 'photos/1981/1981 Zoë on the swing 0001.jpg', thumbPath: ArchiveSite.thumbnailPath(1), seq: 1, caption: 'Zoë on the swing', dateWords: 'July 1981', folder: '1981', source: 'Box: Shoebox 1', place: 'Strandhill', people: ['Zoë Hartigan'] });
  s.add({ photoPath: 'photos/1983/1983 Tom <and> "Zoë" 0002.jpg', thumbPath: ArchiveSite.thumbnailPath(2), seq: 2, caption: 'Tom <and> "Zoë"', dateWords: 'summer 1983', folder: '1983', source: 'Box: Shoebox 1', place: null, people: ['Tom Byrne', 'zoë hartigan'] });
  s.add({ photoPath: 'photos/undated/undated 0003.jpg', thumbPath: null, seq: 3, caption: null, dateWords: '', folder: 'undated', source: null, place: null, people: [] });
  return new Map(s.files());
}

describe('the pages of an export', () => {
  it('has index.html at the top, a page per year, per source and per person, an about page and one stylesheet', () => {
    expect([...site().keys()].sort()).toEqual([
      'browse/about.html', 'browse/people/1-zoe-hartigan.html', 'browse/people/2-tom-byrne.html', 'browse/sources/1-box-shoebox-1.html', 'browse/sources/2-source-not-recorded.html',
      'browse/style.css', 'browse/years/1981.html', 'browse/years/1983.html', 'browse/years/undated.html', 'index.html',
    ]);
  });

  it('links with relative, encoded paths only and escapes what people typed', () => {
    const files = site();
    const year = files.get('browse/years/1983.html')!;
    expect(year).toContain('href="../../photos/1983/1983%20Tom%20%3Cand%3E%20%22Zo%C3%AB%22%200002.jpg"');
    expect(year).toContain('src="../../browse/thumbnails/2.jpg"');
    expect(year).toContain('Tom &lt;and&gt; &quot;Zoë&quot;');
    for (const [, html] of files) {
      expect(html).not.toMatch(/<script/i);
      expect(html).not.toMatch(/(href|src)="(https?:|\/)/);
    }
  });

  it('lists on a person\u2019s page exactly their prints, whatever the letter case they were named in', () => {
    const zoe = site().get('browse/people/1-zoe-hartigan.html')!;
    expect([...zoe.matchAll(/No\. (\d+)/g)].map((m) => m[1])).toEqual(['1', '2']);
    const tom = site().get('browse/people/2-tom-byrne.html')!;
    expect([...tom.matchAll(/No\. (\d+)/g)].map((m) => m[1])).toEqual(['2']);
  });

  it('says on the about page who made it, when, how to check the bag and how to keep the prints', () => {
    const about = site().get('browse/about.html')!;
    expect(about).toContain('made by Máire on 3 Dec 2026');
    expect(about).toContain('sha256sum --check manifest-sha256.txt');
    expect(about).toContain('Photographic Activity Test (ISO 18916)');
  });
});
