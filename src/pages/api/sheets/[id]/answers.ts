import { apiRoute, json, readJson } from '../../../../lib/server/http.ts';
import { saveSheetAnswer } from '../../../../lib/server/sheets.ts';

/**
 * What a relative wrote beside one print of the sheet, typed in by an editor:
 * `{ itemId, relative, who, where, when, note }`, kept as a suggestion in the relative's name.
 */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const saved = await saveSheetAnswer(locals, params.id, await readJson(request));
  return json(saved, saved.created ? 201 : 200, saved.created ? { location: `/api/suggestions/${saved.suggestionId}` } : {});
});
