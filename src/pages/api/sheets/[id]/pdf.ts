import { disposition } from '../../../../lib/server/files.ts';
import { apiRoute, pacedBody } from '../../../../lib/server/http.ts';
import { sheetPdfFor } from '../../../../lib/server/sheet-pdf.ts';

/** The contact sheet as a PDF to print, made as it is sent (editors). */
export const GET = apiRoute(async ({ locals, params }) => {
  const pdf = await sheetPdfFor(locals, params.id);
  return new Response(pacedBody(pdf.body), {
    headers: { 'content-type': 'application/pdf', 'content-disposition': disposition('inline', pdf.fileName), 'cache-control': 'private, no-store' },
  });
});
