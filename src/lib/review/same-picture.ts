/** The editor's choices for two prints of the same picture, shared by the route and the print page's island. */
import { z } from 'zod';

/**
 * - keep_both: they are different prints after all, or both are wanted as they are; not proposed again
 * - keep_this / keep_other: one stays, the other is removed (restorable for 30 days)
 * - link: the same picture, both kept, each print's page names the other
 * - use_rescan: this print is a rescan from the negative; it becomes the other (set-aside) print's scan
 */
export const SAME_PICTURE_CHOICES = ['keep_both', 'keep_this', 'keep_other', 'link', 'use_rescan'] as const;
export type SamePictureChoice = (typeof SAME_PICTURE_CHOICES)[number];

export const samePictureInput = z
  .object({
    otherId: z.string({ required_error: 'Name the other print (otherId).' }).uuid('That is not a print id.'),
    choice: z.enum(SAME_PICTURE_CHOICES, { errorMap: () => ({ message: 'Choose keep_both, keep_this, keep_other, link or use_rescan.' }) }),
  })
  .strict();
export type SamePictureInput = z.infer<typeof samePictureInput>;
