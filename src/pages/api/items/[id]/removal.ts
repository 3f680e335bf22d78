import { z } from 'zod';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { itemRemovalSummary, removeItem } from '../../../../lib/server/removal.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';

/** What removing the print would take with it (decision, captions, hand-made corrections), for the confirmation. */
export const GET = apiRoute(async ({ locals, params }) => {
  const item = await loadItemFor(locals, params.id, 'editor');
  return json({ id: item.id, seq: item.seq, originalName: item.originalName, ...(await itemRemovalSummary(item)) });
});

const confirmation = z.object({ confirm: z.literal(true, { errorMap: () => ({ message: 'Confirm the removal with "confirm": true.' }) }) }).strict();

/**
 * Removes the print (editors and owners) once confirmed: it leaves every list at once and can be
 * restored from "Recently removed" for 30 days, after which its original scan is deleted.
 */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const item = await loadItemFor(locals, params.id, 'editor');
  parseInput(confirmation, await readJson(request));
  return json(await removeItem(item, { userId: locals.user!.id, requestId: locals.requestId }));
});
