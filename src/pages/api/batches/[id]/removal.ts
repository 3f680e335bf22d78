import { z } from 'zod';
import { batchForCaller } from '../../../../lib/server/batches.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { batchRemovalSummary, removeBatch } from '../../../../lib/server/removal.ts';

/** What removing the batch would take: its prints, with their decisions, captions and hand-made corrections. */
export const GET = apiRoute(async ({ locals, params }) => {
  const batch = await batchForCaller(locals, params.id, 'editor');
  return json({ id: batch.id, name: batch.name, ...(await batchRemovalSummary(batch)) });
});

const confirmation = z.object({ confirm: z.literal(true, { errorMap: () => ({ message: 'Confirm the removal with "confirm": true.' }) }) }).strict();

/** Removes the batch and its prints (editors and owners) once confirmed; restorable for 30 days. */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const batch = await batchForCaller(locals, params.id, 'editor');
  parseInput(confirmation, await readJson(request));
  return json(await removeBatch(batch, { userId: locals.user!.id, requestId: locals.requestId }));
});
