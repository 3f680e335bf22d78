import { z } from 'zod';
import { requireCurrentArchive } from '../../../lib/server/access.ts';
import { apiRoute, json, parseInput, readJson } from '../../../lib/server/http.ts';
import { recentlyRemoved, restoreBatch, restoreItem } from '../../../lib/server/removal.ts';

/** The current archive's removed batches and prints that can still be restored, newest first. */
export const GET = apiRoute(async ({ locals }) => {
  const m = requireCurrentArchive(locals, 'editor');
  return json({ removed: await recentlyRemoved(m.archiveId) });
});

const restoreInput = z.object({ kind: z.enum(['batch', 'print'], { message: 'Say whether a batch or a print is restored.' }), id: z.string().uuid('Not an id.') }).strict();

/** Restores a removed batch (with the prints removed with it) or a print removed on its own. */
export const POST = apiRoute(async ({ locals, request }) => {
  const m = requireCurrentArchive(locals, 'editor');
  const input = parseInput(restoreInput, await readJson(request));
  const actor = { userId: locals.user!.id, requestId: locals.requestId };
  return json(input.kind === 'batch' ? { batch: await restoreBatch(m.archiveId, input.id, actor) } : { item: await restoreItem(m.archiveId, input.id, actor) });
});
