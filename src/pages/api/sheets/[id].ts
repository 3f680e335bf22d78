import { apiRoute, json } from '../../../lib/server/http.ts';
import { sheetView } from '../../../lib/server/sheets.ts';

/** A contact sheet: its prints in the sheet's order, with what each shows now (editors). */
export const GET = apiRoute(async ({ locals, params }) => json(await sheetView(locals, params.id)));
