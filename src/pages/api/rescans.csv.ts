import { spreadsheetCsv } from '../../lib/archive/csv.ts';
import { requireCurrentArchive } from '../../lib/server/access.ts';
import { apiRoute } from '../../lib/server/http.ts';
import { listRescans, RESCAN_CSV_COLUMNS, rescanCsvRecord } from '../../lib/server/rescans.ts';

/** The rescan list as CSV (UTF-8 with a byte-order mark, cells safe to open in a spreadsheet); same filters as the page. */
export const GET = apiRoute(async ({ locals, url }) => {
  const m = requireCurrentArchive(locals, 'viewer');
  const batchId = url.searchParams.get('batch') || undefined;
  const location = url.searchParams.has('location') ? url.searchParams.get('location')! : undefined;
  const rows = await listRescans(m.archiveId, { batchId: batchId && /^[0-9a-f-]{36}$/i.test(batchId) ? batchId : undefined, location });
  const csv = spreadsheetCsv([[...RESCAN_CSV_COLUMNS], ...rows.map(rescanCsvRecord)]);
  return new Response(csv, {
    headers: {
      'content-type': 'text/csv; charset=utf-8',
      'content-disposition': `attachment; filename="rescan-list-${new Date().toISOString().slice(0, 10)}.csv"`,
    },
  });
});
