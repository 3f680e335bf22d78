import { z } from 'zod';
import { batchForCaller } from '../../../../lib/server/batches.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { moveItem } from '../../../../lib/server/removal.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';

const moveInput = z.object({ batchId: z.string().uuid('Choose the batch to move the print to.') }).strict();

/** Moves the print to another batch of its archive (editors and owners), where it takes the next number. */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const item = await loadItemFor(locals, params.id, 'editor');
  const input = parseInput(moveInput, await readJson(request));
  const target = await batchForCaller(locals, input.batchId, 'editor');
  return json(await moveItem(item, target, { userId: locals.user!.id, requestId: locals.requestId }));
});
