import { requireCurrentArchive } from '../../../lib/server/access.ts';
import { exportRequestSchema } from '../../../lib/archive/exports.ts';
import { listExports } from '../../../lib/server/export/status.ts';
import { requestExport } from '../../../lib/server/export/request.ts';
import { apiRoute, json, parseInput, readJson } from '../../../lib/server/http.ts';

/** The current archive's exports, newest first (editors). */
export const GET = apiRoute(async ({ locals }) => {
  const m = requireCurrentArchive(locals, 'editor');
  return json({ exports: await listExports(m.archiveId) });
});

/**
 * Asks for an export (editors): `{ selection: { kind: "items", itemIds } | { kind: "batch", batchId } |
 * { kind: "since_last" }, includeOriginals?, namePattern? }`. 202 with Location: the status to poll.
 */
export const POST = apiRoute(async ({ locals, request }) => {
  requireCurrentArchive(locals, 'editor');
  const input = parseInput(exportRequestSchema, await readJson(request));
  const status = await requestExport(locals, input);
  return json(status, 202, { location: status.statusUrl });
});
