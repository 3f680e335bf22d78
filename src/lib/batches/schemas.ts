/**
 * Batch and upload shapes shared by the web API, the batch form and the upload island.
 * Pure: no server imports, safe in the browser.
 */
import edtf from 'edtf';
import { z } from 'zod';
import { plainText } from '../archive/plain-text.ts';

/** Physical sources a batch can come from (db/models/Batch.ts uses this list). */
export const SOURCE_KINDS = ['box', 'drawer', 'album', 'envelope', 'other'] as const;
export type SourceKind = (typeof SOURCE_KINDS)[number];

export const SOURCE_KIND_LABELS: Record<SourceKind, string> = {
  box: 'Box',
  drawer: 'Drawer',
  album: 'Album',
  envelope: 'Envelope',
  other: 'Something else',
};

/** Item processing states (db/models/Item.ts uses this list). */
export const ITEM_STATES = ['queued', 'analysing', 'ready', 'failed'] as const;
export type ItemState = (typeof ITEM_STATES)[number];

export const ITEM_STATE_LABELS: Record<ItemState, string> = {
  queued: 'Waiting',
  analysing: 'Being analysed',
  ready: 'Ready for review',
  failed: 'Failed',
};

/**
 * Items per state, plus the total, and the ready prints' full-size corrected JPEGs:
 * - `fullSize`: prints with the full-size JPEG of their current correction (made after "ready", once
 *   no scans wait for analysis; exports make any missing one);
 * - `remaking`: prints with a full-size JPEG of an earlier correction whose current one is not
 *   rendered yet (a newer version replaced it), so `fullSize + remaking` never goes back when a
 *   correction is replaced;
 * - `remakingShared`: those of `remaking` whose current correction is the batch's shared (pooled)
 *   estimate, which replaces a print's own proposal once the batch has settled.
 */
export type StateCounts = Record<ItemState, number> & { total: number; fullSize: number; remaking: number; remakingShared: number };

/** All-zero counts. */
export function emptyCounts(): StateCounts {
  return { queued: 0, analysing: 0, ready: 0, failed: 0, total: 0, fullSize: 0, remaking: 0, remakingShared: 0 };
}

/** True when no item of the batch still waits for or is in analysis. */
export function isSettled(c: StateCounts): boolean {
  return c.total > 0 && c.queued === 0 && c.analysing === 0;
}

const optionalText = (max: number, what: string, multiline = false) =>
  plainText(what, multiline)
    .pipe(z.string().trim().max(max, `At most ${max} characters.`))
    .optional()
    .transform((v) => (v ? v : undefined));

/**
 * Dates of a batch are loose, as family memory is: a year (`1978`), a month (`1981-07`), a day,
 * or EDTF-style approximations (`1981~`, `198X`). The server checks them further with the edtf package.
 */
const looseDate = z
  .string()
  .trim()
  .max(40, 'At most 40 characters.')
  .regex(/^[0-9X?~%./-]*$/, 'Use a year like 1978, a month like 1981-07, or EDTF such as 1981~ or 198X.')
  .optional()
  .transform((v) => (v ? v : undefined));

/** The span of an EDTF date (198X: 1980-1989), or null when it is not one we can read. */
function dateSpan(value: string): { min: number; max: number } | null {
  try {
    const d = edtf(value);
    return d.min === null || d.max === null ? null : { min: d.min, max: d.max };
  } catch {
    return null;
  }
}

/** A new batch: one sitting's scans from one physical source. */
export const batchCreateSchema = z
  .object({
    name: plainText('The name').pipe(z.string().trim().min(1, 'Give the batch a name.').max(200, 'At most 200 characters.')),
    sourceKind: z.enum(SOURCE_KINDS).default('box'),
    sourceLabel: optionalText(200, 'The label'),
    dateFrom: looseDate,
    dateTo: looseDate,
    notes: optionalText(4000, 'The notes', true),
    /** "These are rescans": scans from the negatives of prints set aside for one, matched to those prints. */
    holdsRescans: z.boolean().optional(),
  })
  .superRefine((b, ctx) => {
    const from = b.dateFrom ? dateSpan(b.dateFrom) : null;
    const to = b.dateTo ? dateSpan(b.dateTo) : null;
    // Refused only when no reading of the two dates puts the end on or after the start (1981~ to 198X is fine).
    if (from && to && to.max < from.min) ctx.addIssue({ code: z.ZodIssueCode.custom, path: ['dateTo'], message: `The end (${b.dateTo}) is before the start (${b.dateFrom}).` });
  });
export type BatchCreateInput = z.input<typeof batchCreateSchema>;
export type BatchCreate = z.output<typeof batchCreateSchema>;

/** The request header carrying a file's name on upload (URI-encoded, since names may hold any character). */
export const FILE_NAME_HEADER = 'x-file-name';

/** Upload limits as the server enforces them, shown to the archivist. */
export const uploadLimitsSchema = z.object({
  maxBytes: z.number().int().positive(),
  maxPixels: z.number().int().positive(),
});
export type UploadLimits = z.infer<typeof uploadLimitsSchema>;

/** The types taken, judged by the bytes of a file, never its name. */
export const ACCEPTED_TYPES_TEXT = 'JPEG, TIFF or PNG scans';

/** Plain words for the limits, for the upload page. */
export function describeLimits(l: UploadLimits): string {
  return `${ACCEPTED_TYPES_TEXT}, up to ${Math.round(l.maxBytes / 1048576)} MB and ${Math.round(l.maxPixels / 1e6)} megapixels each.`;
}

/** What the upload endpoint answers for one file. */
export interface UploadOutcome {
  outcome: 'added' | 'duplicate';
  item: { id: string; seq: number; state: ItemState; originalName: string; batchId: string };
  /** For a duplicate: where the same bytes already are. */
  existing?: { batchId: string; batchName: string; seq: number; originalName: string };
  sha256: string;
}
