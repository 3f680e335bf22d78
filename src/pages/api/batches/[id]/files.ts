import { FILE_NAME_HEADER } from '../../../../lib/batches/schemas.ts';
import { batchForCaller, noteUploadActivity } from '../../../../lib/server/batches.ts';
import { InvalidInput, TooLarge } from '../../../../lib/server/errors.ts';
import { apiRoute, json } from '../../../../lib/server/http.ts';
import { uploadLimits } from '../../../../lib/server/body-limits.ts';
import { ingestScan } from '../../../../lib/server/ingest.ts';
import { drainingBody } from '../../../../lib/server/request-body.ts';

/** The upload (one drop of files) a scan belongs to, named by the client: its prints are numbered by file name. */
function uploadKey(request: Request): string | null {
  const raw = request.headers.get('x-upload-key');
  if (raw === null) return null;
  if (!/^[A-Za-z0-9-]{1,64}$/.test(raw)) throw new InvalidInput('The X-Upload-Key header names an upload with up to 64 letters, digits and dashes.', { 'x-upload-key': 'Not an upload key.' });
  return raw;
}

function fileName(request: Request): string {
  const raw = request.headers.get(FILE_NAME_HEADER);
  if (!raw) throw new InvalidInput(`Name the file in the ${FILE_NAME_HEADER} header (URI-encoded).`, { [FILE_NAME_HEADER]: 'Required.' });
  try {
    return decodeURIComponent(raw);
  } catch {
    return raw;
  }
}

/** While a body keeps coming, `note` is called every few seconds (a large scan over a slow link takes minutes). */
async function* notingActivity(body: AsyncIterable<Uint8Array>, note: () => Promise<void>): AsyncIterable<Uint8Array> {
  let noted = Date.now();
  for await (const chunk of body) {
    if (Date.now() - noted >= NOTE_EVERY_MS) {
      noted = Date.now();
      void note().catch(() => undefined);
    }
    yield chunk;
  }
}
const NOTE_EVERY_MS = 5000;

/**
 * Uploads one scan into a batch: the raw file is the request body (any content type; the bytes
 * decide), its name in the X-File-Name header. Streamed to storage, never held in memory.
 * 201 with the new item (its analysis queued); 200 when the same bytes are already in the archive.
 */
export const POST = apiRoute(async ({ locals, params, request }) => {
  const batch = await batchForCaller(locals, params.id, 'editor');
  await noteUploadActivity(batch.id);
  try {
    return await receiveScan(batch, locals, request);
  } finally {
    // a long upload, or one refused late, counts until it ends
    await noteUploadActivity(batch.id).catch(() => undefined);
  }
});

async function receiveScan(batch: { id: string; archiveId: string }, locals: App.Locals, request: Request): Promise<Response> {
  const name = fileName(request);
  const group = uploadKey(request);
  const declared = Number(request.headers.get('content-length') ?? NaN);
  const limits = uploadLimits();
  if (Number.isFinite(declared) && declared > limits.maxBytes) throw new TooLarge(`The file is ${Math.round(declared / 1048576)} MB; the limit is ${Math.round(limits.maxBytes / 1048576)} MB.`);
  if (!request.body) throw new InvalidInput('The request has no file in its body.');
  // A refusal part-way (full disk, over the limit) reads the rest away first, so the client hears it.
  const upload = drainingBody(request.body, limits.maxBytes);
  try {
    const body = notingActivity(upload.body, () => noteUploadActivity(batch.id));
    const result = await ingestScan({ archiveId: batch.archiveId, batchId: batch.id, userId: locals.user!.id, name, body, requestId: locals.requestId, uploadKey: group });
    if (result.outcome === 'duplicate') return json(result, 200);
    return json(result, 201, { location: `/api/items/${result.item.id}` });
  } catch (err) {
    // the client hears the refusal only once its body is read
    await upload.drained();
    throw err;
  }
}
