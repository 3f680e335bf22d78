/**
 * Browsable pages benchmark (`npm run bench:archive-pages`): prints figures, asserts nothing.
 * Feeds the export's page maker (src/lib/archive/html-archive.ts) 500 and then 5,000 prints as an
 * export adds them (invented captions, dates over 30 years, 40 boxes, a few of 300 people on each
 * print), then takes its pages one at a time and hashes them, as the export hands each to the zip.
 * The process's resident memory is read from /proc after every page; the floor is the process's
 * own before any print is added. Ends with `html_pages_seconds_5000`, `html_pages_floor_rss_mb`,
 * `html_pages_peak_rss_mb_500` and `html_pages_peak_rss_mb_5000`.
 */
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { ArchiveSite } from '../../src/lib/archive/html-archive.ts';

function rssMb(): number {
  return Number(/^VmRSS:\s+(\d+) kB/m.exec(readFileSync('/proc/self/status', 'utf8'))?.[1] ?? 0) / 1024;
}

function run(count: number): { seconds: number; peak: number; pages: number; bytes: number } {
  const t0 = performance.now();
  const site = new ArchiveSite({ archiveName: 'Hartigan family', madeBy: 'Máire Hartigan', madeAt: new Date(), exportId: 'bench', includeOriginals: true });
  let peak = rssMb();
  for (let i = 0; i < count; i++) {
    const year = 1965 + (i % 30);
    const people = [`Person ${(i * 7) % 300}`, `Person ${(i * 13) % 300}`, `Zoë ${(i * 3) % 50}`].slice(0, 1 + (i % 3));
    site.add({
      photoPath: `photos/${year}/${year} Picnic at the lake with everyone ${String(i + 1).padStart(4, '0')}.jpg`,
      thumbPath: ArchiveSite.thumbnailPath(i + 1),
      seq: i + 1,
      caption: i % 5 ? `Picnic at the lake with ${people.join(' and ')}, the day the car broke down (${i + 1})` : null,
      dateWords: `summer ${year}`,
      folder: String(year),
      source: `Box: Shoebox ${i % 40}`,
      place: i % 2 ? 'Lough Arrow' : null,
      people,
    });
    if (i % 250 === 0) peak = Math.max(peak, rssMb());
  }
  let pages = 0;
  let bytes = 0;
  for (const [, text] of site.files()) {
    const body = Buffer.from(text, 'utf8');
    createHash('sha256').update(body).digest();
    pages++;
    bytes += body.length;
    peak = Math.max(peak, rssMb());
  }
  return { seconds: (performance.now() - t0) / 1000, peak, pages, bytes };
}

const floor = rssMb();
const small = run(500);
const large = run(5000);
console.log(`500 prints: ${small.pages} pages, ${(small.bytes / 1048576).toFixed(1)} MB in ${small.seconds.toFixed(2)} s; 5,000 prints: ${large.pages} pages, ${(large.bytes / 1048576).toFixed(1)} MB in ${large.seconds.toFixed(2)} s`);
console.log(`html_pages_seconds_5000: ${large.seconds.toFixed(2)}`);
console.log(`html_pages_floor_rss_mb: ${floor.toFixed(0)}`);
console.log(`html_pages_peak_rss_mb_500: ${small.peak.toFixed(0)}`);
console.log(`html_pages_peak_rss_mb_5000: ${large.peak.toFixed(0)}`);
