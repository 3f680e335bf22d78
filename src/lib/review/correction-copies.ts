/**
 * Using one print's correction on chosen prints of the same batch: the request's schema (shared by
 * the endpoint and the adjust panel) and what a copy takes from the source.
 */
import { z } from 'zod';
import type { Correction } from '../restoration/correction.ts';

/** Most prints one copy request may name (a sitting is a few hundred scans). */
export const MAX_COPY_TARGETS = 1000;

/** Copies the source print's saved correction onto the prints named in `to`. */
export const correctionCopyInput = z
  .object({
    to: z
      .array(z.string().uuid('Each print is named by its id.'))
      .min(1, 'Choose at least one print to use this correction on.')
      .max(MAX_COPY_TARGETS, `Choose at most ${MAX_COPY_TARGETS} prints at once.`),
    /** The source's version the operator is looking at; a newer one saved meanwhile is a conflict. */
    fromVersion: z.number().int().min(1).optional(),
    /** Also copy the turns and crop; without, each print keeps its own. */
    withGeometry: z.boolean().default(false),
  })
  .strict()
  .superRefine((v, ctx) => {
    if (new Set(v.to).size !== v.to.length) ctx.addIssue({ code: 'custom', path: ['to'], message: 'A print is listed twice.' });
  });
export type CorrectionCopyInput = z.infer<typeof correctionCopyInput>;

/**
 * The correction a print gets when `source` is used on it: every colour setting of the source;
 * the turns and crop of the source only when asked, otherwise the print's own (a crop fits one
 * print's scanner background, seldom another's).
 */
export function copiedCorrection(source: Correction, target: Correction | null, withGeometry: boolean): Correction {
  const { geometry: sourceGeometry, ...colour } = source;
  const geometry = withGeometry ? sourceGeometry : target?.geometry;
  return geometry ? { ...colour, geometry } : colour;
}
