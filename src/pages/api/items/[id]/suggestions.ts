import { idParam } from '../../../../lib/server/access.ts';
import { suggestionSchema } from '../../../../lib/archive/metadata.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { suggest, suggestionsFor } from '../../../../lib/server/suggestions.ts';

const STATES = ['pending', 'accepted', 'declined'] as const;

/** A print's suggestions (editors see all, viewers their own); `?state=pending` narrows. */
export const GET = apiRoute(async ({ locals, params, url }) => {
  const s = url.searchParams.get('state');
  const state = (STATES as readonly string[]).includes(s ?? '') ? (s as (typeof STATES)[number]) : undefined;
  return json({ suggestions: await suggestionsFor(locals, idParam(params.id, 'That print'), state) });
});

/** Suggests a caption, date, place or people for a print (any member). */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const id = idParam(params.id, 'That print');
  await loadItemFor(locals, id, 'viewer');
  const input = parseInput(suggestionSchema, await readJson(request));
  const created = await suggest(locals, id, input);
  return json(created, 201, { location: `/api/suggestions/${created.id}` });
});
