/**
 * Serving stored files to a caller whose role has been checked: streamed from storage with the
 * right content type, never from public/, revalidated by ETag, read only as fast as the client takes it.
 */
import { NotFound } from './errors.ts';
import { pacedBody } from './paced-body.ts';
import { storage } from './storage.ts';

export function disposition(kind: 'inline' | 'attachment', filename: string): string {
  const ascii = filename.replace(/[^\x20-\x7e]/g, '_').replace(/["\\]/g, '_');
  return `${kind}; filename="${ascii}"; filename*=UTF-8''${encodeURIComponent(filename)}`;
}

/** A streamed response of the stored file `key`; 404 when it is not (yet) there. */
export async function fileResponse(request: Request, key: string | null | undefined, contentType: string, filename: string, opts: { download?: boolean } = {}): Promise<Response> {
  if (!key) throw new NotFound('That file');
  const st = await storage().stat(key);
  if (!st) throw new NotFound('That file');
  const etag = `"${st.bytes.toString(36)}-${st.modified.getTime().toString(36)}"`;
  const headers: Record<string, string> = {
    'content-type': contentType,
    'cache-control': 'private, no-cache',
    etag,
    'content-disposition': disposition(opts.download ? 'attachment' : 'inline', filename),
  };
  if (request.headers.get('if-none-match') === etag) return new Response(null, { status: 304, headers });
  headers['content-length'] = String(st.bytes);
  if (request.method === 'HEAD') return new Response(null, { status: 200, headers });
  // paced to the client: a slow download of a large original must not be read into memory ahead of it
  return new Response(pacedBody(storage().read(key)), { status: 200, headers });
}

/** `name.ext` with its extension replaced (for corrected and preview downloads). */
export function withExtension(name: string, suffix: string): string {
  const base = name.split('/').pop() ?? name;
  return base.replace(/\.[A-Za-z0-9]{1,5}$/, '') + suffix;
}
