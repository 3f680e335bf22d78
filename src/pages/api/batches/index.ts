import { batchCreateSchema } from '../../../lib/batches/schemas.ts';
import { requireCurrentArchive } from '../../../lib/server/access.ts';
import { createBatch, listBatches } from '../../../lib/server/batches.ts';
import { apiRoute, json, parseInput, readJson } from '../../../lib/server/http.ts';

/** The current archive's batches, newest first, each with its counts per item state. */
export const GET = apiRoute(async ({ locals }) => {
  const archive = requireCurrentArchive(locals, 'viewer');
  return json({ archive: archive.slug, batches: await listBatches(archive.archiveId) });
});

/** Creates a batch in the current archive (editors and owners). */
export const POST = apiRoute(async ({ locals, request }) => {
  const archive = requireCurrentArchive(locals, 'editor');
  const input = parseInput(batchCreateSchema, await readJson(request));
  const batch = await createBatch(archive.archiveId, locals.user!.id, input, locals.requestId);
  return json(batch, 201, { location: `/api/batches/${batch.id}` });
});
