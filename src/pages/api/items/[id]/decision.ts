import type { APIContext } from 'astro';
import { idParam } from '../../../../lib/server/access.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { decide } from '../../../../lib/server/review/decisions.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { decisionInput } from '../../../../lib/review/schemas.ts';

async function record({ locals, params, request }: APIContext) {
  const id = idParam(params.id, 'That print');
  await loadItemFor(locals, id, 'editor');
  const input = parseInput(decisionInput, await readJson(request));
  const { detail, queuedVersion } = await decide(locals, id, input);
  return json({ item: detail, queuedRender: queuedVersion }, queuedVersion ? 202 : 200);
}

/**
 * Records the operator's decision on a print (editors and owners). Send the print's lockVersion
 * as loaded: if someone decided or adjusted it since, the answer is 409 naming who and when.
 */
export const POST = apiRoute(record);
/** Same as POST: a decision replaces the previous one, guarded by lockVersion. */
export const PUT = apiRoute(record);
