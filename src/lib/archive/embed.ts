/**
 * The metadata an exported JPEG carries, so any photo program shows the caption years from now:
 * XMP dc:description (caption), dc:subject (people and place), photoshop:DateCreated (a year or a
 * month allowed, as the Family History Metadata Working Group recommends; a span as its start),
 * Iptc4xmpExt:PersonInImage, dc:source (where the print came from, plain text), the full EDTF in
 * our own namespace; the same caption, keywords, place and date in IPTC IIM (UTF-8, iptc.ts) for
 * programs that read only IIM; and EXIF DateTimeOriginal only for an exact day.
 * EXIF stays plain ASCII, because libvips flattens non-ASCII and trims a trailing " (…)" from EXIF
 * strings (seen with sharp 0.34 here).
 */
import type { PrintDate } from './edtf.ts';
import { iptcDate, type IptcFields } from './iptc.ts';

export interface EmbeddedMetadata {
  caption: string | null;
  date: PrintDate | null;
  place: string | null;
  people: string[];
  /** Where the print came from, e.g. "box Shoebox 1, envelope Summer 81". */
  source: string | null;
  backText: string | null;
  /** When the print was scanned (EXIF form), if known. */
  scannedAt?: string | null;
  /** The file name of the scan of the print's back, beside this file in the export, if there is one. */
  backFile?: string | null;
}

const NS = {
  x: 'adobe:ns:meta/',
  rdf: 'http://www.w3.org/1999/02/22-rdf-syntax-ns#',
  dc: 'http://purl.org/dc/elements/1.1/',
  photoshop: 'http://ns.adobe.com/photoshop/1.0/',
  Iptc4xmpExt: 'http://iptc.org/std/Iptc4xmpExt/2008-02-29/',
  Iptc4xmpCore: 'http://iptc.org/std/Iptc4xmpCore/1.0/xmlns/',
  drawerlight: 'https://drawerlight.local/ns/print/1.0/',
};

/** XML text escaping; characters XML 1.0 forbids (most C0 controls) are dropped. */
export function xmlText(s: string): string {
  return s
    // eslint-disable-next-line no-control-regex
    .replace(/[\u0000-\u0008\u000b\u000c\u000e-\u001f\ufffe\uffff]/g, '')
    .replace(/&/g, '&amp;')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/"/g, '&quot;');
}

const bag = (tag: string, values: string[]) =>
  values.length ? `<${tag}><rdf:Bag>${values.map((v) => `<rdf:li>${xmlText(v)}</rdf:li>`).join('')}</rdf:Bag></${tag}>` : '';
const alt = (tag: string, value: string | null) =>
  value ? `<${tag}><rdf:Alt><rdf:li xml:lang="x-default">${xmlText(value)}</rdf:li></rdf:Alt></${tag}>` : '';
const simple = (tag: string, value: string | null | undefined) => (value ? `<${tag}>${xmlText(value)}</${tag}>` : '');

/** photoshop:DateCreated: the date at its own precision, or where its span starts. */
export function dateCreated(date: PrintDate | null): string | null {
  return date ? (date.xmpDate ?? date.spanStart) : null;
}

/** An XMP packet (UTF-8) with the print's caption, people, place and date. */
export function buildXmp(m: EmbeddedMetadata): string {
  const subjects = [...m.people, ...(m.place ? [m.place] : [])];
  const body = [
    alt('dc:description', m.caption),
    bag('dc:subject', subjects),
    simple('photoshop:DateCreated', dateCreated(m.date)),
    bag('Iptc4xmpExt:PersonInImage', m.people),
    simple('Iptc4xmpCore:Location', m.place),
    simple('dc:source', m.source),
    simple('drawerlight:DateEDTF', m.date?.edtf ?? null),
    simple('drawerlight:DateInWords', m.date?.words ?? null),
    simple('drawerlight:TextOnBack', m.backText),
    simple('drawerlight:BackScanFile', m.backFile),
  ].join('');
  const xmlns = Object.entries(NS)
    .filter(([k]) => k !== 'x' && k !== 'rdf')
    .map(([k, v]) => ` xmlns:${k}="${v}"`)
    .join('');
  return (
    `<?xpacket begin="\ufeff" id="W5M0MpCehiHzreSzNTczkc9d"?>` +
    `<x:xmpmeta xmlns:x="${NS.x}"><rdf:RDF xmlns:rdf="${NS.rdf}"><rdf:Description rdf:about=""${xmlns}>${body}</rdf:Description></rdf:RDF></x:xmpmeta>` +
    `<?xpacket end="w"?>`
  );
}

const PLAIN = /^[\x20-\x7e]*$/;

/**
 * EXIF for sharp's withExif (strings only): the caption only when it is plain ASCII without a
 * trailing parenthesis (libvips would damage it otherwise; XMP carries it in full), the print's
 * date only when it is an exact day, the scan date as DateTimeDigitized.
 */
export function buildExif(m: EmbeddedMetadata): { IFD0: Record<string, string>; IFD2?: Record<string, string> } {
  const IFD0: Record<string, string> = { Software: 'Drawerlight' };
  const caption = m.caption?.replace(/\s+/g, ' ').trim();
  if (caption && PLAIN.test(caption) && !/\)\s*$/.test(caption)) IFD0.ImageDescription = caption;
  const IFD2: Record<string, string> = {};
  if (m.date?.exact && m.date.exifDate) IFD2.DateTimeOriginal = m.date.exifDate;
  if (m.scannedAt && /^\d{4}:\d{2}:\d{2} \d{2}:\d{2}:\d{2}$/.test(m.scannedAt)) IFD2.DateTimeDigitized = m.scannedAt;
  return Object.keys(IFD2).length ? { IFD0, IFD2 } : { IFD0 };
}

/** The IPTC IIM fields: the same caption, keywords (people, then place), place and date as the XMP. */
export function buildIptcFields(m: EmbeddedMetadata): IptcFields {
  return {
    caption: m.caption,
    keywords: [...m.people, ...(m.place ? [m.place] : [])],
    subLocation: m.place,
    dateCreated: iptcDate(dateCreated(m.date)),
  };
}
