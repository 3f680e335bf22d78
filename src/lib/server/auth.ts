import { Auth, type AuthConfig } from '@auth/core';
import Credentials from '@auth/core/providers/credentials';
import Nodemailer from '@auth/core/providers/nodemailer';
import SequelizeAdapter from '@auth/sequelize-adapter';
import { z } from 'zod';
import { db, User, VerificationToken } from '../../../db/index.ts';
import { config } from './config.ts';
import { linkMail, sendMail } from './mailer.ts';
import { verifyPassword } from './passwords.ts';

export const AUTH_BASE_PATH = '/api/auth';

const credentialsSchema = z.object({ email: z.string().trim().toLowerCase().email(), password: z.string().min(1).max(500) });

let authConfig: AuthConfig | undefined;

/** The Auth.js configuration: e-mail + password and one-time e-mail links, JWT sessions. */
export function getAuthConfig(): AuthConfig {
  if (authConfig) return authConfig;
  const c = config();
  const sequelize = db();
  authConfig = {
    basePath: AUTH_BASE_PATH,
    trustHost: true,
    secret: c.authSecret,
    session: { strategy: 'jwt', maxAge: 14 * 24 * 3600, updateAge: 24 * 3600 },
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
        if (user?.id) token.sub = user.id;
        return token;
      },
      async session({ session, token }) {
        if (token.sub && session.user) (session.user as { id?: string }).id = token.sub;
        return session;
      },
    },
    logger: {
      error(err) {
        // Wrong passwords are an expected outcome, not a server fault.
        if ((err as { type?: string }).type === 'CredentialsSignin') return;
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

/** The signed-in user's id from the session cookie, or null. */
export async function sessionUserId(request: Request): Promise<string | null> {
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
