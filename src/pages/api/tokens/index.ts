import { z } from 'zod';
import { createApiToken, listApiTokens } from '../../../lib/server/api-tokens.ts';
import { requireUser } from '../../../lib/server/access.ts';
import { recordAudit } from '../../../lib/server/audit.ts';
import { Forbidden } from '../../../lib/server/errors.ts';
import { apiRoute, json, parseInput, readJson } from '../../../lib/server/http.ts';

const schema = z.object({ name: z.string().trim().min(1, 'Give the token a name.').max(120) });

/** The signed-in user's API tokens (never their secrets). */
export const GET = apiRoute(async ({ locals }) => {
  const user = requireUser(locals);
  return json({ tokens: await listApiTokens(user.id) });
});

/** Creates a personal API token; the secret is in this response only. */
export const POST = apiRoute(async ({ locals, request }) => {
  const user = requireUser(locals);
  if (locals.authVia === 'token') throw new Forbidden('Create tokens from the Settings page, not with another token.');
  const { name } = parseInput(schema, await readJson(request));
  const { token, record } = await createApiToken(user.id, name);
  await recordAudit({ archiveId: null, actorId: user.id, action: 'token.create', subjectType: 'api_token', subjectId: record.id, details: { name }, requestId: locals.requestId });
  return json({ id: record.id, name: record.name, prefix: record.prefix, token }, 201, { location: `/api/tokens/${record.id}` });
});
