import { requireCurrentArchive } from '../../../lib/server/access.ts';
import { archiveSettingsSchema, updateArchiveSettings } from '../../../lib/server/archive-settings.ts';
import { apiRoute, json, parseInput, readJson } from '../../../lib/server/http.ts';

/** Changes the current archive's settings (owners only): the time zone dates are shown in. */
export const PATCH = apiRoute(async ({ locals, request }) => {
  const m = requireCurrentArchive(locals, 'owner');
  const input = parseInput(archiveSettingsSchema, await readJson(request));
  return json(await updateArchiveSettings(m.archiveId, input, { userId: locals.user!.id, requestId: locals.requestId }));
});
