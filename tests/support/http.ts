/**
 * A small HTTP client for the integration tests, talking to the real web server of the test run:
 * cookie sessions (signed in through Auth.js exactly as the sign-in form does) or API tokens.
 */
export const BASE = process.env.APP_URL ?? 'http://127.0.0.1:4321';

export interface Reply<T = any> {
  status: number;
  headers: Headers;
  body: T;
  text: string;
}

export class Client {
  private jar = new Map<string, string>();
  /** `base` is the server to talk to: the test run's by default, or another stack's (tests/support/isolated-stack.ts). */
  constructor(
    readonly token?: string,
    readonly base: string = BASE,
  ) {}

  cookieHeader(): string {
    return [...this.jar].map(([k, v]) => `${k}=${v}`).join('; ');
  }

  private keep(res: Response) {
    for (const c of res.headers.getSetCookie()) {
      const [pair, ...attrs] = c.split(';');
      const i = pair.indexOf('=');
      const name = pair.slice(0, i).trim();
      const value = pair.slice(i + 1).trim();
      const expired = attrs.some((a) => /max-age=0\b/i.test(a) || /expires=Thu, 01 Jan 1970/i.test(a));
      if (expired || value === '') this.jar.delete(name);
      else this.jar.set(name, value);
    }
  }

  /** Sends a request; `json` becomes the body. Same-origin requests carry our Origin, as a browser's would. */
  async request<T = any>(method: string, path: string, opts: { json?: unknown; body?: BodyInit; headers?: Record<string, string>; redirect?: RequestRedirect } = {}): Promise<Reply<T>> {
    const headers: Record<string, string> = { accept: 'application/json', origin: this.base, ...(opts.headers ?? {}) };
    if (this.token) headers.authorization = `Bearer ${this.token}`;
    if (this.jar.size) headers.cookie = this.cookieHeader();
    let body = opts.body;
    if (opts.json !== undefined) {
      headers['content-type'] = 'application/json';
      body = JSON.stringify(opts.json);
    }
    const res = await fetch(this.base + path, { method, headers, body, redirect: opts.redirect ?? 'manual', duplex: 'half' } as RequestInit);
    this.keep(res);
    const text = await res.text();
    let parsed: any = text;
    try {
      parsed = text ? JSON.parse(text) : null;
    } catch {
      /* not JSON */
    }
    return { status: res.status, headers: res.headers, body: parsed as T, text };
  }

  get<T = any>(path: string, headers?: Record<string, string>) {
    return this.request<T>('GET', path, { headers });
  }
  post<T = any>(path: string, json?: unknown) {
    return this.request<T>('POST', path, { json: json ?? {} });
  }
  patch<T = any>(path: string, json: unknown) {
    return this.request<T>('PATCH', path, { json });
  }
  delete<T = any>(path: string) {
    return this.request<T>('DELETE', path);
  }

  /** Signs in with e-mail and password through Auth.js's credentials callback, like the sign-in form. */
  async signIn(email: string, password: string): Promise<Reply> {
    const csrf = await this.get<{ csrfToken: string }>('/api/auth/csrf');
    return this.request('POST', '/api/auth/callback/credentials', {
      body: new URLSearchParams({ email, password, csrfToken: csrf.body.csrfToken, callbackUrl: `${this.base}/` }),
      headers: { 'content-type': 'application/x-www-form-urlencoded', accept: 'text/html' },
    });
  }
}

/** A client signed in as `email`; throws when the sign-in did not produce a session. */
export async function signedIn(email: string, password: string, base: string = BASE): Promise<Client> {
  const c = new Client(undefined, base);
  await c.signIn(email, password);
  const me = await c.get('/api/me');
  if (me.status !== 200) throw new Error(`sign-in as ${email} failed: /api/me answered ${me.status}`);
  return c;
}
