/**
 * Who may call each API route. The authorization walk derives the routes from the files under
 * src/pages/api and fails for any route and method without a rule here, so a new route cannot
 * ship without saying who may use it.
 *
 * - `archive`: the route acts on a resource of one archive (named by its params): another
 *   archive's member gets 404, a lower role 403.
 * - `current`: the route acts on the caller's current archive: a lower role gets 403; a member of
 *   another archive acts on their own.
 * - `user`: any signed-in user, acting on their own things.
 * - `public`: no sign-in needed (Auth.js, invitation links, signing out).
 * A revoked or unknown API token is refused with 401 everywhere, before any route runs.
 */
import type { Role } from '../../../src/lib/auth/roles.ts';

export type ResourceName = 'batch' | 'item' | 'export' | 'suggestion' | 'membership' | 'removableMembership' | 'invitation' | 'randomId' | 'version' | 'inviteToken' | 'sheet';

export interface RouteRule {
  scope: 'archive' | 'current' | 'user' | 'public';
  role?: Role;
  params?: Record<string, ResourceName>;
  /** Query string for GET routes that need one to get past validation. */
  query?: string;
  /** Server-sent events: read the status only. */
  stream?: boolean;
  /** Only a signed-in session may call it; an API token gets 403 (tokens cannot mint tokens). */
  sessionOnly?: boolean;
  /** Auth.js's own routes read cookies only and pay no attention to an Authorization header. */
  tokensIgnored?: boolean;
}

export const ROUTE_RULES: Record<string, RouteRule> = {
  'ALL /api/auth/[...auth]': { scope: 'public', tokensIgnored: true },
  'GET /api/me': { scope: 'user' },
  'POST /api/session/archive': { scope: 'user' },
  'PATCH /api/archive': { scope: 'current', role: 'owner' },
  'POST /api/session/signout': { scope: 'public' },
  'POST /api/invitations/[token]': { scope: 'public', params: { token: 'inviteToken' } },
  'GET /api/tokens': { scope: 'user' },
  'POST /api/tokens': { scope: 'user', sessionOnly: true },
  'DELETE /api/tokens/[id]': { scope: 'user', params: { id: 'randomId' } },

  'GET /api/team': { scope: 'current', role: 'owner' },
  'POST /api/team/invitations': { scope: 'current', role: 'owner' },
  'DELETE /api/team/invitations/[id]': { scope: 'archive', role: 'owner', params: { id: 'invitation' } },
  'PATCH /api/team/members/[id]': { scope: 'archive', role: 'owner', params: { id: 'membership' } },
  'DELETE /api/team/members/[id]': { scope: 'archive', role: 'owner', params: { id: 'removableMembership' } },

  'GET /api/batches': { scope: 'current', role: 'viewer' },
  'POST /api/batches': { scope: 'current', role: 'editor' },
  'GET /api/batches/[id]': { scope: 'archive', role: 'viewer', params: { id: 'batch' } },
  'GET /api/batches/[id]/events': { scope: 'archive', role: 'viewer', params: { id: 'batch' }, stream: true },
  'GET /api/batches/events': { scope: 'current', role: 'viewer', stream: true },
  'POST /api/batches/[id]/files': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'GET /api/batches/[id]/items': { scope: 'archive', role: 'viewer', params: { id: 'batch' } },
  'POST /api/batches/[id]/decisions': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'GET /api/batches/[id]/metadata': { scope: 'archive', role: 'viewer', params: { id: 'batch' } },
  'GET /api/batches/[id]/backs': { scope: 'archive', role: 'viewer', params: { id: 'batch' } },
  'POST /api/batches/[id]/backs': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'GET /api/batches/[id]/backs/[back]': { scope: 'archive', role: 'viewer', params: { id: 'batch', back: 'randomId' } },
  'PATCH /api/batches/[id]/metadata': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'POST /api/batches/[id]/decisions/undo': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'GET /api/batches/[id]/removal': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'POST /api/batches/[id]/removal': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'GET /api/removed': { scope: 'current', role: 'editor' },
  'POST /api/removed': { scope: 'current', role: 'editor' },

  'GET /api/items/[id]': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'GET /api/items/[id]/original': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'GET /api/items/[id]/preview': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'GET /api/items/[id]/thumbnail': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'GET /api/items/[id]/corrected': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'GET /api/items/[id]/crop': { scope: 'archive', role: 'viewer', params: { id: 'item' }, query: 'max=64' },
  'POST /api/items/[id]/retry': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'POST /api/items/[id]/decision': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'PUT /api/items/[id]/decision': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'GET /api/items/[id]/corrections': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'POST /api/items/[id]/corrections': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'POST /api/items/[id]/corrections/[version]/restore': { scope: 'archive', role: 'editor', params: { id: 'item', version: 'version' } },
  'POST /api/items/[id]/corrections/copies': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'GET /api/items/[id]/metadata': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'PATCH /api/items/[id]/metadata': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'GET /api/items/[id]/suggestions': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'POST /api/items/[id]/suggestions': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'POST /api/items/[id]/rescan': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'GET /api/items/[id]/same-picture': { scope: 'archive', role: 'viewer', params: { id: 'item' } },
  'POST /api/items/[id]/same-picture': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'GET /api/items/[id]/removal': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'POST /api/items/[id]/removal': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'POST /api/items/[id]/move': { scope: 'archive', role: 'editor', params: { id: 'item' } },
  'POST /api/suggestions/[id]': { scope: 'archive', role: 'editor', params: { id: 'suggestion' } },
  'GET /api/people': { scope: 'current', role: 'viewer' },
  'GET /api/rescans.csv': { scope: 'current', role: 'viewer' },

  'GET /api/exports': { scope: 'current', role: 'editor' },
  'POST /api/exports': { scope: 'current', role: 'editor' },
  'GET /api/exports/[id]': { scope: 'archive', role: 'editor', params: { id: 'export' } },
  'GET /api/batches/[id]/sheets': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'POST /api/batches/[id]/sheets': { scope: 'archive', role: 'editor', params: { id: 'batch' } },
  'GET /api/sheets/[id]': { scope: 'archive', role: 'editor', params: { id: 'sheet' } },
  'GET /api/sheets/[id]/pdf': { scope: 'archive', role: 'editor', params: { id: 'sheet' } },
  'POST /api/sheets/[id]/answers': { scope: 'archive', role: 'editor', params: { id: 'sheet' } },
  'GET /api/exports/[id]/download': { scope: 'archive', role: 'editor', params: { id: 'export' } },
};
