/** The browser side of the JSON API: same-origin requests through ky, the one error shape turned into an ApiError. */
import ky, { HTTPError } from 'ky';

export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly fields: Record<string, string> = {},
  ) {
    super(message);
  }
}

// No retries and no time limit: a refused change is shown as it is, and an export or a bulk change may take a while.
const client = ky.create({ credentials: 'same-origin', retry: 0, timeout: false, headers: { accept: 'application/json' } });

/** Calls the API at `path` (GET, or POST when there is a body); resolves to its JSON, rejects with an ApiError for an error answer. */
export async function api<T = unknown>(path: string, init: { method?: string; body?: unknown } = {}): Promise<T> {
  try {
    const res = await client(path, { method: init.method ?? (init.body === undefined ? 'GET' : 'POST'), json: init.body });
    if (res.status === 204) return undefined as T;
    return (await res.json().catch(() => null)) as T;
  } catch (err) {
    if (!(err instanceof HTTPError)) throw err;
    const data = (await err.response.json().catch(() => null)) as { error?: { code?: string; message?: string; fields?: Record<string, string> } } | null;
    const e = data?.error ?? {};
    throw new ApiError(err.response.status, e.code ?? 'error', e.message ?? `The server answered ${err.response.status}.`, e.fields ?? {});
  }
}
