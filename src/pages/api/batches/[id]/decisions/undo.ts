import { idParam } from '../../../../../lib/server/access.ts';
import { AppError } from '../../../../../lib/server/errors.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../../lib/server/http.ts';
import { batchForCaller } from '../../../../../lib/server/batches.ts';
import { undoBulkDecision } from '../../../../../lib/server/review/decisions.ts';
import { undoBulkInput } from '../../../../../lib/review/schemas.ts';

/**
 * Undoes one bulk decision of the batch (editors and owners), named by the `bulkId` its answer
 * gave: its prints go back to their decisions before it. Prints decided or adjusted since are left
 * alone and listed in `conflicts`; when none could go back the answer is a 409.
 */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const batchId = idParam(params.id, 'That batch');
  await batchForCaller(locals, batchId, 'editor');
  const input = parseInput(undoBulkInput, await readJson(request));
  const result = await undoBulkDecision(locals, batchId, input.bulkId);
  if (result.decided.length === 0) {
    const fields = Object.fromEntries(result.conflicts.map((c) => [c.id, c.message]));
    throw new AppError(409, 'nothing_undone', `None of the ${result.conflicts.length} prints could go back: ${result.conflicts[0].message}`, fields);
  }
  return json(result);
});
