import { z } from 'zod';
import { idParam } from '../../../../lib/server/access.ts';
import { batchForCaller } from '../../../../lib/server/batches.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { moveItem } from '../../../../lib/server/removal.ts';
import { itemForRole } from '../../../../lib/server/review/access.ts';

const moveInput = z.object({ batchId: z.string().uuid('Choose the batch to move the print to.') }).strict();

/** Moves the print to another batch of its archive (editors and owners), where it takes the next number. */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const item = await itemForRole(locals, idParam(params.id, 'That print'), 'editor');
  const input = parseInput(moveInput, await readJson(request));
  const target = await batchForCaller(locals, input.batchId, 'editor');
  return json(await moveItem(item, target, { userId: locals.user!.id, requestId: locals.requestId }));
});
