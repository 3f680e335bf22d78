import type { UploadLimits } from '../batches/schemas.ts';
import { config } from './config.ts';
import { InvalidInput, TooLarge } from './errors.ts';

/** The limits of a scan that every way in enforces (upload, rescan, ingest command, the engine), from config. */
export function uploadLimits(): UploadLimits {
  const c = config();
  return { maxBytes: c.limits.maxUploadBytes, maxPixels: c.limits.maxPixels };
}

/** JSON bodies: a bulk change of a thousand prints is some 50 KB, so 1 MiB leaves room and no more. */
export const JSON_BODY_LIMIT = 1024 * 1024;
/** Form bodies (sign-in, the archive switcher): a few short fields. */
export const FORM_BODY_LIMIT = 64 * 1024;

// The two routes whose body is a scan; every other body is a small JSON document or form.
const SCAN_UPLOAD = /^\/api\/(batches\/[^/]+\/files|items\/[^/]+\/rescan)\/?$/;

/** The most bytes a request to `pathname` may carry. */
export function bodyLimitFor(pathname: string): number {
  if (SCAN_UPLOAD.test(pathname)) return config().limits.maxUploadBytes;
  return pathname.startsWith('/api/auth/') ? FORM_BODY_LIMIT : JSON_BODY_LIMIT;
}

const mbText = (bytes: number) => `${Math.round((bytes / 1048576) * 10) / 10} MB`;

function tooLarge(limit: number): TooLarge {
  const size = limit >= 1048576 ? `${Math.round(limit / 1048576)} MB` : `${Math.round(limit / 1024)} KB`;
  return new TooLarge(`The request body is larger than the ${size} this address takes.`);
}

/**
 * Refuses a request whose declared Content-Length passes the limit of its route, before anything
 * is read or anyone looked up. A body sent without a length is capped by `readCappedBody` instead.
 */
export function refuseDeclaredOversize(request: Request, pathname: string): TooLarge | null {
  if (request.method === 'GET' || request.method === 'HEAD') return null;
  const declared = Number(request.headers.get('content-length') ?? NaN);
  const limit = bodyLimitFor(pathname);
  if (!Number.isFinite(declared) || declared <= limit) return null;
  // a scan is refused in the words the upload page uses, with both sizes
  if (SCAN_UPLOAD.test(pathname)) return new TooLarge(`The file is ${mbText(declared)}; the limit for one scan is ${mbText(limit)}.`);
  return tooLarge(limit);
}

/**
 * Reads a whole body of at most `limit` bytes. Past the limit it stops reading (the rest is never
 * buffered) and throws TooLarge; the stream is left alone rather than cancelled, as cancelling the
 * request would cut the connection before the 413 is sent.
 */
export async function readCappedBody(request: Request, limit: number): Promise<Uint8Array<ArrayBuffer>> {
  if (!request.body) return new Uint8Array(0);
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let total = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    total += value.byteLength;
    if (total > limit) {
      reader.releaseLock();
      throw tooLarge(limit);
    }
    chunks.push(value);
  }
  const out = new Uint8Array(total);
  let at = 0;
  for (const c of chunks) {
    out.set(c, at);
    at += c.byteLength;
  }
  return out;
}

/** A JSON body of at most JSON_BODY_LIMIT bytes; anything else is a clear 400 (or 413). */
export async function readJsonBody(request: Request): Promise<unknown> {
  const bytes = await readCappedBody(request, JSON_BODY_LIMIT);
  try {
    return JSON.parse(new TextDecoder().decode(bytes));
  } catch {
    throw new InvalidInput('The request body must be JSON.');
  }
}

/** A form body (URL-encoded or multipart) of at most FORM_BODY_LIMIT bytes, as its fields. */
export async function readFormBody(request: Request): Promise<Record<string, string>> {
  const bytes = await readCappedBody(request, FORM_BODY_LIMIT);
  try {
    const form = await new Response(bytes, { headers: { 'content-type': request.headers.get('content-type') ?? '' } }).formData();
    return Object.fromEntries([...form].map(([k, v]) => [k, typeof v === 'string' ? v : v.name]));
  } catch {
    throw new InvalidInput('The request body must be a form.');
  }
}
