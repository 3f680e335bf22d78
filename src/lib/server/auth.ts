import { randomUUID } from 'node:crypto';
import { Auth, type AuthConfig } from '@auth/core';
import { getToken } from '@auth/core/jwt';
import Credentials from '@auth/core/providers/credentials';
import Nodemailer from '@auth/core/providers/nodemailer';
import SequelizeAdapter from '@auth/sequelize-adapter';
import { QueryTypes } from 'sequelize';
import { z } from 'zod';
import { db, User, VerificationToken } from '../../../db/index.ts';
import type { SignedInUser } from './access.ts';
import { config } from './config.ts';
import { linkMail, sendMail } from './mailer.ts';
import { verifyPassword } from './passwords.ts';

export const AUTH_BASE_PATH = '/api/auth';
const SESSION_MAX_AGE_S = 14 * 24 * 3600;

const credentialsSchema = z.object({ email: z.string().trim().toLowerCase().email(), password: z.string().min(1).max(500) });

let authConfig: AuthConfig | undefined;

/** Auth.js errors caused by what a request carried, not by the server. */
const CLIENT_FAULTS = new Set(['JWTSessionError', 'SessionTokenError', 'MissingCSRF', 'InvalidCheck', 'UnknownAction', 'InvalidCallbackUrl', 'Verification', 'WebAuthnVerificationError']);

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

async function sessionRevoked(sessionId: string): Promise<boolean> {
  if (!UUID.test(sessionId)) return true;
  const rows = await db().query('SELECT 1 FROM revoked_sessions WHERE session_id = :sessionId', { replacements: { sessionId }, type: QueryTypes.SELECT });
  return rows.length > 0;
}

/**
 * Ends the session of the request's cookie on the server: its id is listed as revoked until the
 * session would have expired, so a copy of the cookie stops working too. Nothing happens without one.
 */
export async function revokeSession(request: Request): Promise<void> {
  const c = config();
  const token = await getToken({ req: request, secret: c.authSecret, secureCookie: c.appUrl.startsWith('https://') }).catch(() => null);
  if (!token || typeof token.sid !== 'string' || !UUID.test(token.sid)) return;
  const expiresAt = new Date(typeof token.exp === 'number' ? token.exp * 1000 : Date.now() + SESSION_MAX_AGE_S * 1000);
  await db().query('DELETE FROM revoked_sessions WHERE expires_at < now()');
  await db().query('INSERT INTO revoked_sessions (session_id, expires_at) VALUES (:sid, :expiresAt) ON CONFLICT (session_id) DO NOTHING', { replacements: { sid: token.sid, expiresAt } });
}

/** The Auth.js configuration: e-mail + password and one-time e-mail links, JWT sessions. */
export function getAuthConfig(): AuthConfig {
  if (authConfig) return authConfig;
  const c = config();
  const sequelize = db();
  authConfig = {
    basePath: AUTH_BASE_PATH,
    trustHost: true,
    secret: c.authSecret,
    session: { strategy: 'jwt', maxAge: SESSION_MAX_AGE_S, updateAge: 24 * 3600 },
    useSecureCookies: c.appUrl.startsWith('https://'),
    adapter: SequelizeAdapter(sequelize, { models: { User, VerificationToken } as never, synchronize: false }),
    pages: { signIn: '/signin', error: '/signin', verifyRequest: '/signin?link=sent' },
    providers: [
      Credentials({
        credentials: { email: { label: 'E-mail' }, password: { label: 'Password', type: 'password' } },
        async authorize(raw) {
          const parsed = credentialsSchema.safeParse(raw);
          if (!parsed.success) return null;
          const user = await User.findOne({ where: { email: parsed.data.email } });
          if (!user || !(await verifyPassword(parsed.data.password, user.passwordHash))) return null;
          return { id: user.id, email: user.email, name: user.name };
        },
      }),
      Nodemailer({
        server: { host: c.smtp.host, port: c.smtp.port, secure: c.smtp.secure, auth: c.smtp.auth },
        from: c.mailFrom,
        maxAge: 30 * 60,
        async sendVerificationRequest({ identifier, url }) {
          await sendMail(
            linkMail(
              identifier,
              'Your Drawerlight sign-in link',
              'Someone (we hope you) asked for a link to sign in to Drawerlight. It works once, for 30 minutes.',
              'Sign in to Drawerlight',
              url,
              'If you did not ask for it, ignore this e-mail: nothing happens without the link.',
            ),
          );
        },
      }),
    ],
    callbacks: {
      async signIn({ user, email }) {
        // Links go only to people who already have an account (an owner invites the rest).
        // The same redirect as a sent link answers either way, so nobody learns who has an account.
        if (email?.verificationRequest) {
          const known = user.email ? await User.findOne({ where: { email: user.email.toLowerCase() } }) : null;
          return known ? true : `${c.appUrl}${AUTH_BASE_PATH}/verify-request?provider=nodemailer&type=email`;
        }
        return true;
      },
      async jwt({ token, user }) {
        // Each sign-in is a session of its own, with an id that signing out can revoke (revokeSession).
        if (user?.id) return { ...token, sub: user.id, sid: randomUUID() };
        if (typeof token.sid !== 'string' || (await sessionRevoked(token.sid))) return null;
        return token;
      },
      async session({ session, token }) {
        if (token.sub && session.user) (session.user as { id?: string }).id = token.sub;
        return session;
      },
    },
    logger: {
      error(err) {
        const type = (err as { type?: string }).type ?? err.name;
        // Wrong passwords are an expected outcome, not a server fault.
        if (type === 'CredentialsSignin') return;
        // What a client sent wrong (a garbage cookie, a stale form) is one line, not a stack per request.
        if (CLIENT_FAULTS.has(type)) {
          const cause = (err as { cause?: { err?: Error } }).cause?.err?.message;
          console.error(`[auth] ${type}: ${err.message.split('\n')[0]}${cause ? ` (${cause})` : ''}`);
          return;
        }
        console.error('[auth]', err);
      },
      warn() {},
    },
  };
  return authConfig;
}

/** Runs Auth.js for a request under /api/auth. */
export function handleAuth(request: Request): Promise<Response> {
  return Auth(request, getAuthConfig());
}

/** The user signed in by the request's session cookie, or null (no cookie, an expired session, a removed user). */
export async function sessionUser(request: Request): Promise<SignedInUser | null> {
  const userId = await sessionUserId(request);
  const user = userId ? await User.findByPk(userId) : null;
  return user ? { id: user.id, email: user.email, name: user.name } : null;
}

/** The signed-in user's id from the session cookie, or null. */
async function sessionUserId(request: Request): Promise<string | null> {
  const cookie = request.headers.get('cookie');
  if (!cookie || !/authjs\.session-token/.test(cookie)) return null;
  const url = new URL(`${AUTH_BASE_PATH}/session`, request.url);
  const res = await Auth(new Request(url, { headers: { cookie } }), getAuthConfig());
  if (!res.ok) return null;
  const data = (await res.json()) as { user?: { id?: string } } | null;
  return data?.user?.id ?? null;
}

/**
 * Signs a user in with e-mail and password from the server side (after accepting an
 * invitation) and returns the Set-Cookie headers Auth.js produced.
 */
export async function signInCookies(request: Request, email: string, password: string): Promise<string[]> {
  const origin = new URL(request.url).origin;
  const csrfRes = await Auth(new Request(`${origin}${AUTH_BASE_PATH}/csrf`), getAuthConfig());
  const { csrfToken } = (await csrfRes.json()) as { csrfToken: string };
  const csrfCookies = csrfRes.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ');
  const res = await Auth(
    new Request(`${origin}${AUTH_BASE_PATH}/callback/credentials`, {
      method: 'POST',
      headers: { 'content-type': 'application/x-www-form-urlencoded', cookie: csrfCookies, origin },
      body: new URLSearchParams({ email, password, csrfToken, callbackUrl: `${origin}/` }),
    }),
    getAuthConfig(),
  );
  return res.headers.getSetCookie();
}
