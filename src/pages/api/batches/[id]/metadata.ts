import { idParam, requireArchiveRole, requireUser } from '../../../../lib/server/access.ts';
import { bulkMetadataSchema } from '../../../../lib/archive/metadata.ts';
import { batchMetadata, bulkUpdateMetadata } from '../../../../lib/server/captions.ts';
import { NotFound } from '../../../../lib/server/errors.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { Batch } from '../../../../../db/index.ts';

async function batchFor(locals: App.Locals, id: string | undefined, role: 'viewer' | 'editor') {
  requireUser(locals);
  const batch = await Batch.findByPk(idParam(id, 'That batch'));
  if (!batch || !locals.memberships.some((m) => m.archiveId === batch.archiveId)) throw new NotFound('That batch');
  requireArchiveRole(locals, batch.archiveId, role, 'That batch');
  return batch;
}

/** Caption forms of every print of a batch, in scan order. */
export const GET = apiRoute(async ({ locals, params }) => {
  const batch = await batchFor(locals, params.id, 'viewer');
  return json({ items: await batchMetadata(batch.id) });
});

/** The same date, place, people or envelope for a selection of the batch's prints (editors), all or nothing. */
export const PATCH = apiRoute(async ({ locals, params, request }) => {
  const batch = await batchFor(locals, params.id, 'editor');
  const input = parseInput(bulkMetadataSchema, await readJson(request));
  return json(await bulkUpdateMetadata(locals, batch.id, input));
});
