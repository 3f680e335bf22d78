import { idParam } from '../../../../lib/server/access.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { correctionHistory } from '../../../../lib/server/review/history.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { saveCorrection } from '../../../../lib/server/review/versions.ts';
import { correctionInput } from '../../../../lib/review/schemas.ts';

/** Every version of the print's correction, oldest first, with the current and rendered version. */
export const GET = apiRoute(async ({ locals, params }) => {
  const item = await loadItemFor(locals, params.id, 'viewer');
  return json(await correctionHistory(item));
});

/** Saves an operator correction as a new version and queues its render: 202. */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const id = idParam(params.id, 'That print');
  await loadItemFor(locals, id, 'editor');
  const input = parseInput(correctionInput, await readJson(request));
  const { detail, version } = await saveCorrection(locals, id, input);
  return json({ version, item: detail }, 202);
});
