import { idParam } from '../../../../lib/server/access.ts';
import { AppError } from '../../../../lib/server/errors.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { batchForCaller } from '../../../../lib/server/batches.ts';
import { bulkDecide } from '../../../../lib/server/review/decisions.ts';
import { bulkDecisionInput } from '../../../../lib/review/schemas.ts';

/**
 * One decision for a selection of the batch's prints (editors and owners), e.g. accept every
 * slight print at once. Prints changed since they were loaded are left alone and listed in
 * `conflicts`; when none could be decided the answer is a 409 listing why per print.
 */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const batchId = idParam(params.id, 'That batch');
  await batchForCaller(locals, batchId, 'editor');
  const input = parseInput(bulkDecisionInput, await readJson(request));
  const result = await bulkDecide(locals, batchId, input);
  if (result.decided.length === 0) {
    const fields = Object.fromEntries(result.conflicts.map((c) => [c.id, c.message]));
    throw new AppError(409, 'nothing_decided', `None of the ${result.conflicts.length} selected prints could be decided: ${result.conflicts[0].message}`, fields);
  }
  return json(result);
});
