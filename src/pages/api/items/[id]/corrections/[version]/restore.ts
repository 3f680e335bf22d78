import { idParam } from '../../../../../../lib/server/access.ts';
import { NotFound } from '../../../../../../lib/server/errors.ts';
import { apiRoute, json } from '../../../../../../lib/server/http.ts';
import { restoreVersion } from '../../../../../../lib/server/review/versions.ts';

/** Makes an earlier version current again, recorded as a new 'restored' version; its render is queued: 202. */
export const POST = apiRoute(async ({ locals, params }) => {
  const id = idParam(params.id, 'That print');
  const version = Number(params.version);
  if (!Number.isInteger(version) || version < 1) throw new NotFound('That version');
  const { detail, version: created } = await restoreVersion(locals, id, version);
  return json({ version: created, restoredFrom: version, item: detail }, 202);
});
