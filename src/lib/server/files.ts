/**
 * Serving stored files to a caller whose role has been checked: streamed from storage with the
 * right content type, never from public/, read only as fast as the client takes it. Revalidated by
 * ETag, except a print's small copies asked for by their versioned address (smallCopyUrl), which
 * the browser keeps for good: that address changes whenever what it shows does.
 */
import { createHash } from 'node:crypto';
import { NotFound } from './errors.ts';
import { pacedBody } from './paced-body.ts';
import { derivedKeys } from './processing.ts';
import { storage } from './storage.ts';

/** How long a browser keeps a file asked for by a versioned address: a year, the longest HTTP caches honour. */
const KEEP_VERSIONED = 'private, max-age=31536000, immutable';

export function disposition(kind: 'inline' | 'attachment', filename: string): string {
  const ascii = filename.replace(/[^\x20-\x7e]/g, '_').replace(/["\\]/g, '_');
  return `${kind}; filename="${ascii}"; filename*=UTF-8''${encodeURIComponent(filename)}`;
}

/**
 * A streamed response of the stored file `key`; 404 when it is not (yet) there. With `version`
 * (the file's {@link copyVersion}), a request whose `v` parameter names that version may be kept by
 * the browser for a year without asking again; any other is revalidated by ETag. `private`: the
 * files are a family's photographs behind a sign-in, never for a shared cache.
 */
export async function fileResponse(request: Request, key: string | null | undefined, contentType: string, filename: string, opts: { download?: boolean; version?: string | null } = {}): Promise<Response> {
  if (!key) throw new NotFound('That file');
  const st = await storage().stat(key);
  if (!st) throw new NotFound('That file');
  const etag = `"${st.bytes.toString(36)}-${st.modified.getTime().toString(36)}"`;
  const asked = opts.version ? new URL(request.url).searchParams.get('v') : null;
  const headers: Record<string, string> = {
    'content-type': contentType,
    'cache-control': asked && asked === opts.version ? KEEP_VERSIONED : 'private, no-cache',
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

/** What a print's small copies are chosen by. */
export interface SmallCopySource {
  id: string;
  originalId: string;
  thumbKey?: string | null;
  previewKey?: string | null;
  previewVersion?: number | null;
}

/**
 * The stored key of a print's thumbnail or stored review copy: `corrected` is the newest
 * correction whose small copies are made (the original's until there is one), `original` the scan as it is.
 */
export function smallCopyKey(item: SmallCopySource, size: 'thumbnail' | 'preview', of: 'corrected' | 'original' = 'corrected'): string | null {
  if (of === 'corrected' && item.previewVersion) return size === 'thumbnail' ? derivedKeys.renderThumbnail(item.id, item.previewVersion) : derivedKeys.renderPreview(item.id, item.previewVersion);
  return (size === 'thumbnail' ? item.thumbKey : item.previewKey) ?? null;
}

/**
 * A version of a small copy that changes whenever its content does: a correction's copies live
 * under keys of their own version, and the original's copies are made again only for a new scan
 * (a rescan from the negative), which is a new original.
 */
export function copyVersion(item: SmallCopySource, key: string | null): string | null {
  return key ? createHash('sha256').update(`${key}\n${item.originalId}`).digest('base64url').slice(0, 16) : null;
}

/** The versioned address of a print's small copy, which the browser may keep (see {@link fileResponse}). */
export function smallCopyUrl(item: SmallCopySource, size: 'thumbnail' | 'preview', of: 'corrected' | 'original' = 'corrected'): string {
  const version = copyVersion(item, smallCopyKey(item, size, of));
  const params = new URLSearchParams();
  if (of !== 'corrected') params.set('of', of);
  if (version) params.set('v', version);
  const query = params.toString();
  return `/api/items/${item.id}/${size}${query ? `?${query}` : ''}`;
}
