/**
 * The pages that let anyone look at an export in a web browser, with nothing to install: plain
 * HTML and one CSS file, no script, no network, relative links only, so they open from a folder or
 * a USB stick in twenty years as they do today. `index.html` at the top of the payload lists the
 * years, the boxes and albums, and the people; a page per year and per source shows each print's
 * thumbnail, number, caption, date in words, place and people, and opens the full corrected JPEG;
 * a page per person lists exactly their prints; "about this archive" says who made it, when, how
 * to check the bag and how to look after it (src/lib/archive/care.ts).
 *
 * The export adds each print as it packs it (the same values as photos.csv); only these few
 * strings per print are kept, and the pages are made one at a time at the end. Pure.
 */
import { CARE_SECTIONS, careTextParts } from './care.ts';
import { UNDATED_FOLDER } from './naming.ts';
import { formatDay } from './when.ts';

/** Where the pages and their thumbnails live in the payload (beside photos/ and photos.csv). */
export const SITE_FOLDER = 'browse';

/** One print as the pages show it. */
export interface SitePrint {
  /** The corrected JPEG's payload path (photos/1981/…jpg). */
  photoPath: string;
  /** Its thumbnail's payload path, when there is one. */
  thumbPath: string | null;
  seq: number;
  caption: string | null;
  dateWords: string;
  /** The export folder it is filed under: a year, a decade, a span, or undated. */
  folder: string;
  /** Its box, drawer, album or envelope in words, or null. */
  source: string | null;
  place: string | null;
  people: string[];
}

export interface SiteInfo {
  archiveName: string;
  madeBy: string | null;
  madeAt: Date;
  timeZone?: string;
  exportId: string;
  includeOriginals: boolean;
}

interface Kept {
  photo: string;
  thumb: string | null;
  seq: number;
  caption: string | null;
  date: string;
  folder: string;
  source: number;
  place: string | null;
  people: number[];
}

const escape = (s: string) => s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
/** A payload path as a relative link from a page `depth` folders down (each part URL-encoded). */
const linkTo = (payloadPath: string, depth: number) => '../'.repeat(depth) + payloadPath.split('/').map(encodeURIComponent).join('/');
const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`;

/** A file-name part for a page of a year, source or person: ASCII letters and digits, unique by its number. */
function slug(text: string, n: number): string {
  const s = text.normalize('NFKD').replace(/[\u0300-\u036f]/g, '').toLowerCase().replace(/[^a-z0-9]+/g, '-').replace(/^-|-$/g, '').slice(0, 40);
  return s ? `${n}-${s}` : String(n);
}

const STYLE = `:root { color-scheme: light; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; margin: 0; background: #faf7f2; color: #1f1a14; line-height: 1.5; }
header, main, footer { max-width: 72rem; margin: 0 auto; padding: 1rem 1.25rem; }
header { border-bottom: 1px solid #d9d1c4; }
nav ul { list-style: none; padding: 0; margin: 0.25rem 0 0; display: flex; flex-wrap: wrap; gap: 0.25rem 1.25rem; }
a { color: #7a3d0c; }
a:focus { outline: 3px solid #1f1a14; outline-offset: 2px; }
h1 { font-size: 1.6rem; margin: 0.25rem 0; }
h2 { font-size: 1.2rem; margin-top: 2rem; }
ul.prints { list-style: none; padding: 0; display: grid; grid-template-columns: repeat(auto-fill, minmax(14rem, 1fr)); gap: 1.25rem; }
ul.prints li { background: #fff; border: 1px solid #e3dccf; border-radius: 4px; padding: 0.5rem; }
ul.prints img { display: block; width: 100%; height: 11rem; object-fit: contain; background: #f1ece4; }
.number { font-weight: 700; }
.muted { color: #4f463b; }
.facts { margin: 0.25rem 0 0; font-size: 0.92rem; }
.facts dt { font-weight: 600; display: inline; }
.facts dd { display: inline; margin: 0; }
.facts dd::after { content: ""; display: block; }
pre { background: #f1ece4; padding: 0.75rem; overflow-x: auto; }
.caution { border-left: 4px solid #9a3412; padding-left: 0.75rem; }
`;

/**
 * Collects the prints of an export as they are packed and makes the pages at the end.
 * Each print costs a few short strings, so thousands of prints stay a few MB.
 */
export class ArchiveSite {
  private readonly prints: Kept[] = [];
  private readonly sources: string[] = [];
  private readonly sourceIndex = new Map<string, number>();
  private readonly people: string[] = [];
  private readonly personIndex = new Map<string, number>();

  constructor(private readonly info: SiteInfo) {}

  /** The payload path for the thumbnail of the `n`th print packed. */
  static thumbnailPath(n: number): string {
    return `${SITE_FOLDER}/thumbnails/${n}.jpg`;
  }

  /** Adds one print as photos.csv lists it. */
  add(p: SitePrint): void {
    const source = p.source ?? 'Source not recorded';
    let s = this.sourceIndex.get(source);
    if (s === undefined) {
      s = this.sources.push(source) - 1;
      this.sourceIndex.set(source, s);
    }
    const people = p.people.map((name) => {
      const key = name.toLowerCase();
      let k = this.personIndex.get(key);
      if (k === undefined) {
        k = this.people.push(name) - 1;
        this.personIndex.set(key, k);
      }
      return k;
    });
    this.prints.push({ photo: p.photoPath, thumb: p.thumbPath, seq: p.seq, caption: p.caption, date: p.dateWords, folder: p.folder, source: s, place: p.place, people });
  }

  private yearPage(folder: string): string {
    return `${SITE_FOLDER}/years/${folder.replace(/[^A-Za-z0-9-]+/g, '-') || UNDATED_FOLDER}.html`;
  }
  private sourcePage(n: number): string {
    return `${SITE_FOLDER}/sources/${slug(this.sources[n], n + 1)}.html`;
  }
  private personPage(n: number): string {
    return `${SITE_FOLDER}/people/${slug(this.people[n], n + 1)}.html`;
  }

  private page(path: string, title: string, body: string): [string, string] {
    const depth = path.split('/').length - 1;
    const nav = [
      ['index.html', 'All years and people'],
      [`${SITE_FOLDER}/about.html`, 'About this archive'],
    ]
      .map(([to, words]) => (to === path ? `<li><a href="${linkTo(to, depth)}" aria-current="page">${words}</a></li>` : `<li><a href="${linkTo(to, depth)}">${words}</a></li>`))
      .join('');
    const html = `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${escape(title)} · ${escape(this.info.archiveName)}</title>
<link rel="stylesheet" href="${linkTo(`${SITE_FOLDER}/style.css`, depth)}">
</head>
<body>
<header>
<p class="muted">${escape(this.info.archiveName)}</p>
<nav aria-label="Archive"><ul>${nav}</ul></nav>
</header>
<main>
<h1>${escape(title)}</h1>
${body}
</main>
<footer><p class="muted">Made on ${escape(formatDay(this.info.madeAt, this.info.timeZone))}. These pages need no internet connection and no program but a web browser.</p></footer>
</body>
</html>
`;
    return [path, html];
  }

  private printList(prints: Kept[], depth: number): string {
    const items = prints.map((p) => {
      const what = p.caption ?? 'No caption';
      const alt = `Print ${p.seq}: ${p.caption ?? 'no caption yet'}`;
      const picture = p.thumb
        ? `<a href="${linkTo(p.photo, depth)}"><img src="${linkTo(p.thumb, depth)}" alt="${escape(alt)}" loading="lazy"></a>`
        : `<a href="${linkTo(p.photo, depth)}">Open print ${p.seq}</a>`;
      const facts: string[] = [];
      if (p.date) facts.push(`<dt>When:</dt> <dd>${escape(p.date)}</dd>`);
      if (p.place) facts.push(`<dt>Where:</dt> <dd>${escape(p.place)}</dd>`);
      if (p.people.length) facts.push(`<dt>Who:</dt> <dd>${p.people.map((k) => `<a href="${linkTo(this.personPage(k), depth)}">${escape(this.people[k])}</a>`).join(', ')}</dd>`);
      return `<li>${picture}<p><span class="number">No. ${p.seq}</span> ${escape(what)}</p>${facts.length ? `<dl class="facts">${facts.join('')}</dl>` : ''}</li>`;
    });
    return `<ul class="prints">${items.join('\n')}</ul>`;
  }

  private groups(): { years: Map<string, Kept[]>; sources: Map<number, Kept[]>; people: Map<number, Kept[]> } {
    const years = new Map<string, Kept[]>();
    const sources = new Map<number, Kept[]>();
    const people = new Map<number, Kept[]>();
    for (const p of this.prints) {
      (years.get(p.folder) ?? years.set(p.folder, []).get(p.folder)!).push(p);
      (sources.get(p.source) ?? sources.set(p.source, []).get(p.source)!).push(p);
      for (const k of p.people) (people.get(k) ?? people.set(k, []).get(k)!).push(p);
    }
    return { years, sources, people };
  }

  /** The site's files, one at a time: payload path and content. */
  *files(): Generator<[string, string]> {
    const { years, sources, people } = this.groups();
    yield [`${SITE_FOLDER}/style.css`, STYLE];
    const yearOrder = [...years.keys()].sort((a, b) => (a === UNDATED_FOLDER ? 1 : b === UNDATED_FOLDER ? -1 : a.localeCompare(b)));
    const personOrder = [...people.keys()].sort((a, b) => this.people[a].localeCompare(this.people[b]));
    const link = (to: string, words: string, count: number) => `<li><a href="${linkTo(to, 0)}">${escape(words)}</a> <span class="muted">(${plural(count, 'print')})</span></li>`;
    yield this.page(
      'index.html',
      `Photographs of the ${this.info.archiveName}`,
      `<p>${plural(this.prints.length, 'photograph')}. Choose a year, a box or album, or a person; each small picture opens the full photograph.</p>
<h2>By year</h2>
<ul>${yearOrder.map((y) => link(this.yearPage(y), y === UNDATED_FOLDER ? 'Not dated yet' : y, years.get(y)!.length)).join('')}</ul>
<h2>By box, album or envelope</h2>
<ul>${[...sources.keys()].map((s) => link(this.sourcePage(s), this.sources[s], sources.get(s)!.length)).join('')}</ul>
<h2>By person</h2>
${personOrder.length ? `<ul>${personOrder.map((k) => link(this.personPage(k), this.people[k], people.get(k)!.length)).join('')}</ul>` : '<p>No one is named in these photographs yet.</p>'}
<h2>About</h2>
<p><a href="${linkTo(`${SITE_FOLDER}/about.html`, 0)}">Who made this archive, how to check it is complete, and how to look after it</a>.</p>`,
    );
    for (const y of yearOrder) yield this.page(this.yearPage(y), y === UNDATED_FOLDER ? 'Photographs not dated yet' : `Photographs of ${y}`, this.printList(years.get(y)!, 2));
    for (const [s, prints] of sources) yield this.page(this.sourcePage(s), this.sources[s], this.printList(prints, 2));
    for (const k of personOrder) {
      const prints = people.get(k)!;
      yield this.page(this.personPage(k), this.people[k], `<p>${plural(prints.length, 'photograph')} with ${escape(this.people[k])}.</p>${this.printList(prints, 2)}`);
    }
    yield this.page(`${SITE_FOLDER}/about.html`, 'About this archive', this.about());
  }

  private about(): string {
    const i = this.info;
    const made = `<p>This archive of the ${escape(i.archiveName)} was made${i.madeBy ? ` by ${escape(i.madeBy)}` : ''} on ${escape(formatDay(i.madeAt, i.timeZone))} with Drawerlight, from scans of the family's prints. It holds ${plural(this.prints.length, 'photograph')} as corrected JPEG files, with their captions, dates and people written inside each file too${i.includeOriginals ? ', and the untouched scans alongside in the originals folder' : ''}; <code>photos.csv</code> lists every photograph for a spreadsheet program. Its identifier is ${escape(i.exportId)}.</p>`;
    const check = `<h2>Checking that nothing is missing or changed</h2>
<p>The archive is a BagIt bag (an open standard for keeping files safe): <code>manifest-sha256.txt</code>, in the folder above <code>data</code>, holds a SHA-256 checksum of every file. On Linux or a Mac, open a terminal in that folder and run:</p>
<pre><code>sha256sum --check manifest-sha256.txt</code></pre>
<p>(on a Mac, <code>shasum -a 256 --check manifest-sha256.txt</code>). Every line should end in OK. Any BagIt tool checks it too. Check each copy once a year and after copying it to a new drive; if a copy fails, replace it from a copy that passes.</p>`;
    const text = (t: string) => careTextParts(t).map((p) => (p.code ? `<code>${escape(p.text)}</code>` : escape(p.text))).join('');
    const care = CARE_SECTIONS.filter((s) => s.id !== 'checksums')
      .map((s) => {
        const list = s.list || s.caution ? `<ul>${(s.list ?? []).map((li) => `<li>${text(li)}</li>`).join('')}</ul>${s.caution ? `<p class="caution">${text(s.caution)}</p>` : ''}` : '';
        return `<h2>${escape(s.heading)}</h2>${s.paragraphs.map((p) => `<p>${text(p)}</p>`).join('')}${(s.after ?? []).map((p) => `<p>${text(p)}</p>`).join('')}${list}`;
      })
      .join('\n');
    return `${made}\n${check}\n${care}`;
  }
}
