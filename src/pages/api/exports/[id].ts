import { idParam } from '../../../lib/server/access.ts';
import { exportForCaller, exportStatus } from '../../../lib/server/export/status.ts';
import { apiRoute, json } from '../../../lib/server/http.ts';

/** An export's state and progress (editors). */
export const GET = apiRoute(async ({ locals, params }) => {
  const e = await exportForCaller(locals, idParam(params.id, 'That export'), 'editor');
  return json(exportStatus(e), 200, { 'cache-control': 'no-store' });
});
