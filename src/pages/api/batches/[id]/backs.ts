import { z } from 'zod';
import { backsOfBatch, pairBackByHand, unpairBack } from '../../../../lib/server/backs.ts';
import { batchForCaller } from '../../../../lib/server/batches.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { NotFound } from '../../../../lib/server/errors.ts';

const pairingInput = z
  .object({
    backId: z.string().uuid('Choose a back.'),
    // null unpairs the back
    printId: z.string().uuid('Choose a print of this batch.').nullable(),
  })
  .strict();

/** The batch's backs: paired ones in the order of their prints, then those waiting for a print. */
export const GET = apiRoute(async ({ locals, params }) => {
  const batch = await batchForCaller(locals, params.id, 'viewer');
  return json({ backs: await backsOfBatch(batch.id) });
});

/** Pairs a back of the batch with one of its prints, or unpairs it (`printId: null`), by hand (editors). */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const batch = await batchForCaller(locals, params.id, 'editor');
  const input = parseInput(pairingInput, await readJson(request));
  if (!(await backsOfBatch(batch.id)).some((b) => b.id === input.backId)) throw new NotFound('That back');
  const actor = { userId: locals.user!.id, requestId: locals.requestId };
  const back = input.printId === null ? await unpairBack(locals, input.backId, actor) : await pairBackByHand(locals, input.backId, input.printId, actor);
  return json({ back });
});
