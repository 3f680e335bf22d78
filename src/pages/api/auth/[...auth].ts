import type { APIRoute } from 'astro';
import { handleAuth } from '../../../lib/server/auth.ts';

/** Auth.js: sign-in with e-mail and password or a one-time e-mail link, sign-out, session. */
export const ALL: APIRoute = ({ request }) => handleAuth(request);
