/**
 * The PDF of a contact sheet (pdfkit): a cover page that says which batch and archive it is and
 * how to send it back, then the prints twelve a page in the sheet's order, each with its number,
 * caption and date and three lines to write on. The pictures are the prints' stored thumbnails,
 * put into the PDF as the JPEGs they are (no scan is decoded). Pages are written out as they are
 * finished and the writer waits for the reader, so a sheet of hundreds of prints takes no more
 * memory than a few pages.
 */
import { once } from 'node:events';
import { createRequire } from 'node:module';
import { PassThrough, type Writable } from 'node:stream';
import PDFDocument from 'pdfkit';
import { Archive, Batch, User, type ContactSheet } from '../../../db/index.ts';
import { formatDay } from '../archive/when.ts';
import { PRINTS_PER_PAGE, SHEET_HEAD, SHEET_MARGIN, SHEET_PAPERS, scopeWords, sheetCells } from '../sheets/contact-sheet.ts';
import { smallCopyKey } from './files.ts';
import { sheetForCaller, sheetPrints } from './sheets.ts';
import { storage } from './storage.ts';

/** The Inter files the app ships (@fontsource/inter): WOFF, which pdfkit's font reader takes as it is. */
const require = createRequire(import.meta.url);
const FONT_FILES = {
  regular: ['latin', 'latin-ext', 'cyrillic', 'greek', 'vietnamese'].map((s) => require.resolve(`@fontsource/inter/files/inter-${s}-400-normal.woff`)),
  bold: ['latin', 'latin-ext', 'cyrillic', 'greek', 'vietnamese'].map((s) => require.resolve(`@fontsource/inter/files/inter-${s}-700-normal.woff`)),
};

/** Bytes of finished pages the writer lets wait for a slow reader before it waits too. */
const WAITING_BYTES = 4 * 1024 * 1024;

/** What the cover and the running heads name. */
export interface SheetHeading {
  archiveName: string;
  batchName: string;
  madeBy: string | null;
  timeZone?: string;
}

type Doc = InstanceType<typeof PDFDocument>;

/**
 * Inter ships as subsets by script (Latin, Latin extended, Cyrillic, Greek, Vietnamese), none
 * with every letter: a text is set in runs, each in the first subset that has its letters, so
 * "Łukasz" or "Αθήνα" print whole.
 */
class Fonts {
  private readonly covers = new Map<string, (cp: number) => boolean>();
  constructor(private readonly doc: Doc) {
    for (const [weight, files] of Object.entries(FONT_FILES)) {
      files.forEach((file, n) => {
        const name = `${weight}-${n}`;
        doc.registerFont(name, file);
        doc.font(name);
        const font = (doc as unknown as { _font: { font: { hasGlyphForCodePoint(cp: number): boolean } } })._font.font;
        this.covers.set(name, (cp) => font.hasGlyphForCodePoint(cp));
      });
    }
  }

  /** The text cut into runs of one subset each (spaces go with the run they are in). */
  private runs(weight: 'regular' | 'bold', text: string): { font: string; text: string }[] {
    const names = FONT_FILES[weight].map((_, n) => `${weight}-${n}`);
    const runs: { font: string; text: string }[] = [];
    for (const ch of text) {
      const cp = ch.codePointAt(0)!;
      const last = runs[runs.length - 1];
      if (last && (/\s/.test(ch) || this.covers.get(last.font)!(cp))) {
        last.text += ch;
        continue;
      }
      const font = names.find((f) => this.covers.get(f)!(cp)) ?? names[0];
      if (last && last.font === font) last.text += ch;
      else runs.push({ font, text: ch });
    }
    return runs;
  }

  /** Sets `text` at (x, y) with pdfkit's text options, switching subsets where its letters need it. */
  write(weight: 'regular' | 'bold', size: number, text: string, x?: number, y?: number, options: PDFKit.Mixins.TextOptions = {}): void {
    const runs = this.runs(weight, text);
    this.doc.fontSize(size);
    if (runs.length <= 1) {
      this.doc.font(runs[0]?.font ?? `${weight}-0`).text(text, x, y, options);
      return;
    }
    runs.forEach((run, i) => {
      const more = i < runs.length - 1;
      if (i === 0) this.doc.font(run.font).text(run.text, x, y, { ...options, continued: more });
      else this.doc.font(run.font).text(run.text, { ...options, continued: more });
    });
  }
}

async function waitForReader(doc: Doc, out: Writable): Promise<void> {
  while (doc.readableLength + out.writableLength > WAITING_BYTES && !out.destroyed) {
    await Promise.race([once(out, 'drain'), once(out, 'close')]);
  }
  if (out.destroyed) throw new Error('The reader of the contact sheet went away.');
}

/** Writes the sheet's PDF to `out` and ends it; resolves once everything is handed over. */
export async function writeSheetPdf(sheet: ContactSheet, heading: SheetHeading, out: Writable): Promise<void> {
  const paper = SHEET_PAPERS[sheet.paper];
  const doc = new PDFDocument({
    size: [paper.width, paper.height],
    margin: SHEET_MARGIN,
    font: FONT_FILES.regular[0],
    autoFirstPage: false,
    info: { Title: `Contact sheet ${sheet.number}: ${heading.batchName}`, Author: heading.madeBy ?? heading.archiveName, Creator: 'Drawerlight' },
  });
  const finished = new Promise<void>((resolve, reject) => {
    out.on('finish', resolve);
    out.on('close', resolve);
    out.on('error', reject);
    doc.on('error', reject);
  });
  doc.pipe(out);
  const fonts = new Fonts(doc);
  const total = sheet.itemIds.length;
  const pages = Math.ceil(total / PRINTS_PER_PAGE);

  // The cover
  doc.addPage();
  const width = paper.width - 2 * SHEET_MARGIN;
  doc.fillColor('#1f1a14');
  fonts.write('bold', 24, 'Who is in these photographs?', SHEET_MARGIN, SHEET_MARGIN + 20, { width });
  doc.moveDown(0.6);
  const facts = [
    `Contact sheet ${sheet.number}`,
    `Batch: ${heading.batchName}`,
    `Archive: ${heading.archiveName}`,
    `${scopeWords(sheet.scope)}: ${total} ${total === 1 ? 'photograph' : 'photographs'} on ${pages} ${pages === 1 ? 'page' : 'pages'}`,
    `Made on ${formatDay(sheet.createdAt, heading.timeZone)}${heading.madeBy ? ` by ${heading.madeBy}` : ''}`,
  ];
  for (const f of facts) fonts.write('regular', 12, f, undefined, undefined, { width });
  doc.moveDown(1.2);
  const asks = [
    'Each photograph on the next pages has a number. Beside it are three lines: who is in it, where it was taken, and when. Write what you know; leave a line empty when you are not sure. A rough date is a great help ("summer 1981", "early 80s", "about 1975").',
    'If you know the people by name, write them from left to right and separate them with commas.',
    `When you have finished, give or post all the pages back${heading.madeBy ? ` to ${heading.madeBy}` : ''}. Please keep them together: the sheet number above lets your answers be typed in against the right photographs, each with your name beside it.`,
  ];
  for (const a of asks) {
    fonts.write('regular', 12, a, undefined, undefined, { width, lineGap: 3 });
    doc.moveDown(0.8);
  }
  doc.moveDown(1);
  fonts.write('bold', 12, 'Your name:', undefined, undefined, { width });
  const nameLine = doc.y + 22;
  doc.moveTo(SHEET_MARGIN, nameLine).lineTo(SHEET_MARGIN + width * 0.7, nameLine).lineWidth(0.6).strokeColor('#6b6256').stroke();
  await waitForReader(doc, out);

  // The prints, a page at a time (their rows read a page at a time too)
  const cells = sheetCells(sheet.paper);
  const store = storage();
  for (let page = 0; page < pages; page++) {
    const ids = sheet.itemIds.slice(page * PRINTS_PER_PAGE, (page + 1) * PRINTS_PER_PAGE);
    const prints = new Map((await sheetPrints(sheet, ids)).map((p) => [p.itemId, p]));
    doc.addPage();
    const head = `Contact sheet ${sheet.number} · ${heading.batchName} · page ${page + 1} of ${pages}`;
    doc.fillColor('#4a4238');
    fonts.write('regular', 9, head, SHEET_MARGIN, SHEET_MARGIN, { width, height: SHEET_HEAD, lineBreak: false, ellipsis: true });
    for (let k = 0; k < ids.length; k++) {
      const p = prints.get(ids[k]);
      const cell = cells[k];
      const pic = cell.picture;
      doc.rect(cell.x, cell.y, cell.width, cell.height).lineWidth(0.4).strokeColor('#bdb4a6').stroke();
      const key = p ? smallCopyKey(p.item, 'thumbnail') : null;
      const jpeg = key ? await store.readBuffer(key).catch(() => null) : null;
      if (jpeg) {
        doc.image(jpeg, pic.x, pic.y, { fit: [pic.width, pic.height], align: 'center', valign: 'center' });
      } else {
        doc.rect(pic.x, pic.y, pic.width, pic.height).fillColor('#ece7df').fill();
        const none = p ? 'No picture yet' : 'Removed since the sheet was made';
        doc.fillColor('#6b6256');
        fonts.write('regular', 8, none, pic.x, pic.y + pic.height / 2 - 5, { width: pic.width, align: 'center', lineBreak: false });
      }
      let y = pic.y + pic.height + 4;
      const number = `No. ${p?.seq ?? '?'}`;
      doc.fillColor('#1f1a14');
      fonts.write('bold', 10, number, cell.x + 4, y, { width: cell.width - 8, lineBreak: false });
      if (p?.dateWords) {
        doc.fillColor('#4a4238');
        fonts.write('regular', 8, p.dateWords, cell.x + 48, y + 1.5, { width: cell.width - 52, align: 'right', lineBreak: false, height: 10, ellipsis: true });
      }
      y += 13;
      if (p?.caption) {
        doc.fillColor('#1f1a14');
        fonts.write('regular', 7.5, p.caption, cell.x + 4, y, { width: cell.width - 8, height: 19, ellipsis: true });
      }
      y += 21;
      for (const label of ['Who is this?', 'Where?', 'When?']) {
        doc.fillColor('#6b6256');
        fonts.write('regular', 6.5, label, cell.x + 4, y, { width: cell.width - 8, lineBreak: false });
        doc.moveTo(cell.x + 4, y + 15).lineTo(cell.x + cell.width - 4, y + 15).lineWidth(0.5).strokeColor('#8c8274').stroke();
        y += 16;
      }
    }
    await waitForReader(doc, out);
  }
  doc.end();
  await finished;
}

/** The names a sheet's cover shows, read from its rows. */
export async function headingOf(sheet: ContactSheet, timeZone?: string): Promise<SheetHeading> {
  const [archive, batch, maker] = await Promise.all([
    Archive.findByPk(sheet.archiveId, { attributes: ['name'] }),
    Batch.findByPk(sheet.batchId, { paranoid: false, attributes: ['name'] }),
    sheet.madeBy ? User.findByPk(sheet.madeBy, { attributes: ['name', 'email'] }) : null,
  ]);
  return { archiveName: archive?.name ?? '', batchName: batch?.name ?? '', madeBy: maker ? (maker.name ?? maker.email) : null, timeZone };
}

/**
 * A sheet's PDF as a stream for a response (editors), and its file name. The stream is filled as
 * it is read; a failure part way ends it (the reader gets a cut file, the server logs why).
 */
export async function sheetPdfFor(locals: App.Locals, id: string | undefined): Promise<{ body: PassThrough; fileName: string }> {
  const sheet = await sheetForCaller(locals, id);
  const zone = locals.memberships.find((m) => m.archiveId === sheet.archiveId)?.timeZone;
  const heading = await headingOf(sheet, zone);
  const body = new PassThrough();
  writeSheetPdf(sheet, heading, body).catch((err) => {
    console.error(`[sheets] the PDF of contact sheet ${sheet.id} stopped:`, err);
    body.destroy(err as Error);
  });
  return { body, fileName: `contact-sheet-${sheet.number}.pdf` };
}
