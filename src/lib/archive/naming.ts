/**
 * File and folder names for an export, built from a pattern of fields, so a relative can browse
 * the archive by year without any program: `1981/1981-07 Picnic at the lake 0004.jpg`.
 * Names are safe on Windows, macOS and Linux alike (no reserved characters or device names,
 * no trailing dots or spaces, NFC-normalised, bounded length, unique regardless of letter case).
 */
import { z } from 'zod';
import type { PrintDate } from './edtf.ts';

/** The fields a name pattern may use. */
export const NAME_FIELDS = ['date', 'caption', 'seq', 'batch', 'original'] as const;
export type NameField = (typeof NAME_FIELDS)[number];

/** The default pattern: a sortable date, the caption, and the running number. */
export const DEFAULT_NAME_PATTERN = '{date} {caption} {seq}';
/** The folder for prints without a date. */
export const UNDATED_FOLDER = 'undated';

/** A pattern like "{date} {caption} {seq}": at least {seq} so that every name is unique and stable. */
export const namePatternSchema = z
  .string()
  .trim()
  .min(1)
  .max(120)
  .refine((p) => p.includes('{seq}'), 'The pattern must contain {seq}, so every file gets a name of its own.')
  .refine((p) => [...p.matchAll(/\{([^}]*)\}/g)].every((m) => (NAME_FIELDS as readonly string[]).includes(m[1])), {
    message: `Use only these fields: ${NAME_FIELDS.map((f) => `{${f}}`).join(' ')}.`,
  });

const WINDOWS_DEVICES = /^(con|prn|aux|nul|com[0-9¹²³]|lpt[0-9¹²³])(\..*)?$/i;
const MAX_BASE = 120;

/**
 * Makes one path segment safe on every common file system. Letters of every script are kept
 * (families write "Großmutter" and "Zoë"); what Windows or macOS refuse is replaced.
 */
export function safeSegment(text: string, fallback = 'untitled', maxLength = MAX_BASE): string {
  let s = text
    .normalize('NFC')
    // Control characters and the characters Windows refuses; "/" and "\" would make folders.
    .replace(/[\u0000-\u001f\u007f<>:"/\\|?*]+/g, ' ')
    .replace(/\s+/g, ' ')
    .trim();
  // Cut by code points, never inside a surrogate pair.
  const cps = [...s];
  if (cps.length > maxLength) s = cps.slice(0, maxLength).join('').trim();
  s = s.replace(/[. ]+$/, '').replace(/^[. ]+/, '');
  if (!s) s = fallback;
  if (WINDOWS_DEVICES.test(s)) s = `_${s}`;
  return s;
}

/** A sortable, file-safe form of a print's date: "1981-07-15", "1981", "1980s", "1980-1985", "undated". */
export function dateForName(date: PrintDate | null): string {
  if (!date) return UNDATED_FOLDER;
  const span = date.edtf.split('/');
  if (span.length === 2) {
    const [a, b] = span.map((p) => p.replace(/[~?%]/g, '').replace(/^\.\.$/, ''));
    return [a || '…', b || '…'].join(' to ').replace(/X/g, 'x');
  }
  if (date.xmpDate) return date.xmpDate;
  return date.folder;
}

/**
 * The folder of a batch's years, from the dates its source is known to span ("1978-1982",
 * "1980s", "1981"); null when the batch has no dates.
 */
export function batchSpanFolder(from: PrintDate | null, to: PrintDate | null): string | null {
  const a = from?.folder ?? null;
  const b = to?.folder ?? null;
  if (!a || !b || a === b) return a ?? b;
  return `${a}-${b}`;
}

/**
 * The folder a print goes in: its (earliest) year, its decade, or, for a print without a date,
 * the years of its batch when those are known, else the undated folder.
 */
export function folderFor(date: PrintDate | null, batchFolder: string | null = null): string {
  if (date) return safeSegment(date.folder, UNDATED_FOLDER);
  return batchFolder ? safeSegment(batchFolder, UNDATED_FOLDER) : UNDATED_FOLDER;
}

export interface NameInput {
  date: PrintDate | null;
  caption: string | null;
  /** 1-based running number within the export. */
  seq: number;
  batch?: string | null;
  originalName?: string | null;
}

/** The base name (no extension) a pattern gives for one print. */
export function baseName(pattern: string, input: NameInput, seqWidth = 4): string {
  const caption = (input.caption ?? '').split(/\r?\n/)[0];
  const values: Record<NameField, string> = {
    date: dateForName(input.date),
    caption: [...caption].length > 60 ? [...caption].slice(0, 60).join('').replace(/\s+\S*$/, '') : caption,
    seq: String(input.seq).padStart(seqWidth, '0'),
    batch: input.batch ?? '',
    original: (input.originalName ?? '').replace(/\.[A-Za-z0-9]{1,5}$/, ''),
  };
  const filled = pattern.replace(/\{([a-z]+)\}/g, (_, f: NameField) => values[f] ?? '');
  // Fields left empty must not leave doubled separators behind.
  const tidy = filled.replace(/([ _-])[ _-]+/g, '$1').replace(/^[ _-]+|[ _-]+$/g, '');
  return safeSegment(tidy, values.seq);
}

/**
 * Hands out unique relative paths: two prints never share a name, also on file systems that
 * ignore letter case.
 */
export class NameBook {
  private taken = new Set<string>();

  /** `folder/base.ext`, with " (2)", " (3)" … added when the name is already taken. */
  claim(folder: string, base: string, ext: string): string {
    let candidate = `${folder}/${base}${ext}`;
    for (let n = 2; this.taken.has(candidate.toLowerCase()); n++) candidate = `${folder}/${base} (${n})${ext}`;
    this.taken.add(candidate.toLowerCase());
    return candidate;
  }
}
