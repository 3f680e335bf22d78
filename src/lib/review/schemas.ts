/** zod schemas of the review API, beside the domain code so the islands validate with the same rules. */
import { z } from 'zod';
import { correctionSchema } from '../restoration/correction.ts';
import { DECISIONS, NEGATIVE_AVAILABILITY } from './words.ts';

const lockVersion = z.number({ required_error: 'Send the lockVersion of the print as you loaded it.' }).int().min(0);
const negativeLocation = z.string().trim().max(300, 'Keep the place under 300 characters.');
const rescanNote = z.string().trim().max(2000, 'Keep the note under 2000 characters.');

/** One operator decision on one print. */
export const decisionInput = z
  .object({
    decision: z.enum(DECISIONS, { errorMap: () => ({ message: 'Choose accepted, accepted_adjusted, rescan or skipped.' }) }),
    lockVersion,
    negativeAvailable: z.enum(NEGATIVE_AVAILABILITY).optional(),
    negativeLocation: negativeLocation.optional(),
    rescanNote: rescanNote.optional(),
    /** With accepted_adjusted: the operator's correction, saved as a new version in the same step. */
    correction: correctionSchema.optional(),
  })
  .strict()
  .superRefine((v, ctx) => {
    if (v.decision !== 'rescan' && (v.negativeAvailable || v.negativeLocation || v.rescanNote)) {
      ctx.addIssue({ code: 'custom', path: ['decision'], message: 'Negative details go with a rescan decision only.' });
    }
    if (v.correction && v.decision !== 'accepted_adjusted') {
      ctx.addIssue({ code: 'custom', path: ['correction'], message: 'A correction can only come with accepted_adjusted.' });
    }
  });
export type DecisionInput = z.infer<typeof decisionInput>;

/** A bulk decision over a selection of one batch's prints; adjusted acceptance needs a print-by-print look. */
export const bulkDecisionInput = z
  .object({
    /** `undecided` clears the decision: the prints are "not reviewed yet" again. */
    decision: z.enum(['accepted', 'rescan', 'skipped', 'undecided'], { errorMap: () => ({ message: 'In bulk, choose accepted, rescan, skipped or undecided.' }) }),
    items: z
      .array(z.object({ id: z.string().uuid('Each item needs its id.'), lockVersion }).strict())
      .min(1, 'Select at least one print.')
      .max(2000, 'Decide at most 2000 prints at once.'),
    negativeAvailable: z.enum(NEGATIVE_AVAILABILITY).optional(),
    negativeLocation: negativeLocation.optional(),
    rescanNote: rescanNote.optional(),
  })
  .strict()
  .superRefine((v, ctx) => {
    if (v.decision !== 'rescan' && (v.negativeAvailable || v.negativeLocation || v.rescanNote)) {
      ctx.addIssue({ code: 'custom', path: ['decision'], message: 'Negative details go with a rescan decision only.' });
    }
    if (new Set(v.items.map((i) => i.id)).size !== v.items.length) {
      ctx.addIssue({ code: 'custom', path: ['items'], message: 'A print is listed twice.' });
    }
  });
export type BulkDecisionInput = z.infer<typeof bulkDecisionInput>;

/** Undoing one bulk decision, named by the id its answer gave. */
export const undoBulkInput = z.object({ bulkId: z.string().uuid('Name the bulk decision to undo by its bulkId.') }).strict();

/** A new operator version of a print's correction. */
export const correctionInput = z
  .object({
    params: correctionSchema,
    /** The version the operator started from; a newer one saved meanwhile is a conflict. */
    basedOnVersion: z.number().int().min(1).optional(),
  })
  .strict();
export type CorrectionInput = z.infer<typeof correctionInput>;

/** Largest region, in scan pixels, one crop request may ask for. */
export const MAX_CROP_PIXELS = 16_000_000;

/** A region of the oriented scan at full resolution, or the whole scan reduced to `max` on its long side. */
export const cropQuery = z
  .object({
    of: z.enum(['original', 'corrected']).default('original'),
    x: z.coerce.number().int().min(0).optional(),
    y: z.coerce.number().int().min(0).optional(),
    w: z.coerce.number().int().min(1).optional(),
    h: z.coerce.number().int().min(1).optional(),
    max: z.coerce.number().int().min(16).max(4096).optional(),
    version: z.coerce.number().int().min(1).optional(),
  })
  .strict()
  .superRefine((v, ctx) => {
    const given = [v.x, v.y, v.w, v.h].filter((n) => n !== undefined).length;
    if (given !== 0 && given !== 4) ctx.addIssue({ code: 'custom', path: ['x'], message: 'Give all of x, y, w and h, or none for the whole scan.' });
    if (v.w && v.h && v.w * v.h > MAX_CROP_PIXELS) ctx.addIssue({ code: 'custom', path: ['w'], message: `Ask for at most ${MAX_CROP_PIXELS / 1e6} megapixels at once.` });
  });
export type CropQuery = z.infer<typeof cropQuery>;
