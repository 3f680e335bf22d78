/**
 * What a caption says about a print, as the caption form, the bulk edit, the suggestion form
 * and the API all check it. Pure: shared by the server and the browser islands.
 */
import { z } from 'zod';
import { describePrintDate } from './edtf.ts';
import { plainText } from './plain-text.ts';

/** Longest texts we keep; long enough for the back of a print written edge to edge. */
export const LIMITS = { caption: 2000, place: 300, backText: 4000, envelope: 300, person: 200, people: 40, note: 1000 } as const;

/** Empty text means "clear the field"; absence means "leave it as it is". NFC, no control characters. */
const clearable = (max: number, what: string, multiline = false) =>
  plainText(what, multiline)
    .pipe(z.string().max(max, `${what} can be at most ${max} characters.`))
    .nullable()
    .optional()
    .transform((v) => (v === undefined ? undefined : v === null ? null : v.trim() === '' ? null : v.trim()));

/** An EDTF date as typed in the form; the message says what to write instead when it does not parse. */
export const dateField = z
  .string()
  .max(100, 'A date can be at most 100 characters.')
  .nullable()
  .optional()
  .transform((v, ctx) => {
    if (v === undefined) return undefined;
    if (v === null || v.trim() === '') return null;
    const r = describePrintDate(v);
    if (!r.ok) {
      ctx.addIssue({ code: z.ZodIssueCode.custom, message: r.message });
      return z.NEVER;
    }
    return r.date.edtf;
  });

/** One person's name as a tag: trimmed, single spaces. */
export const personName = plainText('A name')
  .transform((s) => s.replace(/\s+/g, ' ').trim())
  .pipe(z.string().min(1, 'A name cannot be empty.').max(LIMITS.person, `A name can be at most ${LIMITS.person} characters.`));

/** The people shown, in caption order; the same name twice (in any letter case) counts once. */
export const peopleField = z
  .array(personName)
  .max(LIMITS.people, `At most ${LIMITS.people} people on one print.`)
  .transform((names) => {
    const seen = new Set<string>();
    return names.filter((n) => !seen.has(n.toLowerCase()) && seen.add(n.toLowerCase()));
  });

/** The caption form of one print. Every field is optional: only what is sent changes. */
export const metadataSchema = z
  .object({
    caption: clearable(LIMITS.caption, 'The caption', true),
    dateEdtf: dateField,
    place: clearable(LIMITS.place, 'The place'),
    people: peopleField.optional(),
    backText: clearable(LIMITS.backText, 'The text on the back', true),
    envelope: clearable(LIMITS.envelope, 'The envelope or source detail'),
  })
  .strict();
export type MetadataInput = z.input<typeof metadataSchema>;
export type MetadataChange = z.output<typeof metadataSchema>;

/** Bulk edit: the same date, place, people or envelope for a selection of prints. */
export const bulkMetadataSchema = z
  .object({
    itemIds: z.array(z.string().uuid('Not an item id.')).min(1, 'Choose at least one print.').max(1000, 'At most 1000 prints at once.'),
    set: metadataSchema,
    /** Add the people to those already tagged, or replace them. */
    peopleMode: z.enum(['add', 'replace']).default('add'),
  })
  .strict()
  .refine((b) => Object.values(b.set).some((v) => v !== undefined), { message: 'Choose at least one field to change.', path: ['set'] });
export type BulkMetadataInput = z.input<typeof bulkMetadataSchema>;

/** A viewer's suggestion: at least one of caption, date, place or people. */
export const suggestionSchema = z
  .object({
    caption: clearable(LIMITS.caption, 'The caption', true),
    dateEdtf: dateField,
    place: clearable(LIMITS.place, 'The place'),
    people: peopleField.optional(),
    note: clearable(LIMITS.note, 'The note', true),
  })
  .strict()
  .refine((s) => Boolean(s.caption || s.dateEdtf || s.place || (s.people && s.people.length)), {
    message: 'Suggest at least a caption, a date, a place or a person.',
    path: ['_'],
  });
export type SuggestionInput = z.input<typeof suggestionSchema>;

/** An editor's answer to a suggestion. */
export const suggestionDecisionSchema = z.object({ decision: z.enum(['accept', 'decline']) }).strict();

/** One print's metadata as the caption form shows it. */
export interface ItemMetadata {
  id: string;
  batchId: string;
  seq: number;
  originalName: string;
  caption: string | null;
  dateEdtf: string | null;
  /** The date in words ("about 1981"). */
  dateWords: string;
  place: string | null;
  people: string[];
  backText: string | null;
  envelope: string | null;
  /** Where the print came from: the batch's box, drawer, album or envelope. */
  source: { kind: string; label: string; batchName: string };
  thumbnailUrl: string;
  /** The review-size copy of the print's back as scanned, when a back is paired with it. */
  backPictureUrl?: string | null;
  pendingSuggestions: number;
  lockVersion: number;
}

/** A suggestion as editors see it. */
export interface SuggestionView {
  id: string;
  itemId: string;
  state: 'pending' | 'accepted' | 'declined';
  caption: string | null;
  dateEdtf: string | null;
  dateWords: string;
  place: string | null;
  people: string[] | null;
  note: string | null;
  suggestedBy: string | null;
  /** Text for "Text on the back of the print". */
  backText?: string | null;
  /** Read from the scan of the print's back (no person suggested it). */
  fromBack?: boolean;
  /** For an answer written on a contact sheet: the member who typed it in for the relative. */
  typedInBy?: string | null;
  createdAt: string;
  decidedAt: string | null;
}
