import { FILE_NAME_HEADER } from '../../../../lib/batches/schemas.ts';
import { idParam } from '../../../../lib/server/access.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';
import { InvalidInput, TooLarge } from '../../../../lib/server/errors.ts';
import { apiRoute, json } from '../../../../lib/server/http.ts';
import { uploadLimits } from '../../../../lib/server/body-limits.ts';
import { attachRescan } from '../../../../lib/server/rescans.ts';

/**
 * Attaches the scan of a print's negative (editors): the raw file is the body, its name in the
 * X-File-Name header, as for an upload. 202: the rescan is stored and queued for analysis; it
 * becomes the current image when done, and the print scan is kept.
 */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const id = idParam(params.id, 'That print');
  await loadItemFor(locals, id, 'editor');
  const raw = request.headers.get(FILE_NAME_HEADER);
  if (!raw) throw new InvalidInput(`Name the file in the ${FILE_NAME_HEADER} header (URI-encoded).`, { [FILE_NAME_HEADER]: 'Required.' });
  let name = raw;
  try {
    name = decodeURIComponent(raw);
  } catch {
    /* keep the raw header */
  }
  const declared = Number(request.headers.get('content-length') ?? NaN);
  const limits = uploadLimits();
  if (Number.isFinite(declared) && declared > limits.maxBytes) throw new TooLarge(`The file is ${Math.round(declared / 1048576)} MB; the limit is ${Math.round(limits.maxBytes / 1048576)} MB.`);
  if (!request.body) throw new InvalidInput('The request has no file in its body.');
  const result = await attachRescan(locals, { itemId: id, name, body: request.body as unknown as AsyncIterable<Uint8Array> });
  return json(result, 202, { location: `/api/items/${id}` });
});
