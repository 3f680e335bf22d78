import { apiRoute, json, readJson } from '../../../../lib/server/http.ts';
import { createSheet, sheetsOfBatch } from '../../../../lib/server/sheets.ts';

/** The batch's contact sheets, newest first (editors). */
export const GET = apiRoute(async ({ locals, params }) => json({ sheets: await sheetsOfBatch(locals, params.id) }));

/** Makes a contact sheet of the batch's prints: `{ scope, paper, itemIds? }` (editors). */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const sheet = await createSheet(locals, params.id, await readJson(request));
  return json(sheet, 201, { location: `/api/sheets/${sheet.id}` });
});
