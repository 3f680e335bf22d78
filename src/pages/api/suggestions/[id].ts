import { idParam } from '../../../lib/server/access.ts';
import { suggestionDecisionSchema } from '../../../lib/archive/metadata.ts';
import { apiRoute, json, parseInput, readJson } from '../../../lib/server/http.ts';
import { authorizeSuggestionDecision, decideSuggestion } from '../../../lib/server/suggestions.ts';

/** Accepts or declines a pending suggestion (editors): `{ "decision": "accept" | "decline" }`. */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const id = idParam(params.id, 'That suggestion');
  await authorizeSuggestionDecision(locals, id);
  const { decision } = parseInput(suggestionDecisionSchema, await readJson(request));
  return json(await decideSuggestion(locals, id, decision));
});
