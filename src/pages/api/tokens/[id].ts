import { revokeApiToken } from '../../../lib/server/api-tokens.ts';
import { idParam, requireUser } from '../../../lib/server/access.ts';
import { recordAudit } from '../../../lib/server/audit.ts';
import { apiRoute } from '../../../lib/server/http.ts';

/** Revokes one of the signed-in user's API tokens. */
export const DELETE = apiRoute(async ({ locals, params }) => {
  const user = requireUser(locals);
  const id = idParam(params.id, 'That token');
  await revokeApiToken(user.id, id);
  await recordAudit({ archiveId: null, actorId: user.id, action: 'token.revoke', subjectType: 'api_token', subjectId: id, requestId: locals.requestId });
  return new Response(null, { status: 204 });
});
