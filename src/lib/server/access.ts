import { roleAtLeast, type Role } from '../auth/roles.ts';
import { Forbidden, NotFound, NotSignedIn } from './errors.ts';

/** The cookie holding the slug of the archive being worked in. */
export const ARCHIVE_COOKIE = 'dl_archive';

export interface SignedInUser {
  id: string;
  email: string;
  name: string | null;
}

export interface ArchiveMembership {
  archiveId: string;
  slug: string;
  name: string;
  role: Role;
  /** The archive's time zone (IANA name), for showing dates and times. */
  timeZone: string;
}

/** Checks made in one place so every route answers the same: 401, then 404 for another archive, then 403. */
export function requireUser(locals: App.Locals): SignedInUser {
  if (!locals.user) throw new NotSignedIn();
  return locals.user;
}

/** The caller's membership in `archiveId` with at least `needed`; another archive's resources answer 404. */
export function requireArchiveRole(locals: App.Locals, archiveId: string, needed: Role, what = 'That'): ArchiveMembership {
  requireUser(locals);
  const m = locals.memberships.find((x) => x.archiveId === archiveId);
  if (!m) throw new NotFound(what);
  if (!roleAtLeast(m.role, needed)) throw new Forbidden();
  return m;
}

/** The archive the caller is working in (switcher cookie, X-Archive header, or the first one), with at least `needed`. */
export function requireCurrentArchive(locals: App.Locals, needed: Role): ArchiveMembership {
  requireUser(locals);
  const current = locals.membership;
  if (!current) throw new NotFound('An archive for your account');
  if (!roleAtLeast(current.role, needed)) throw new Forbidden();
  return current;
}

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
/** A route's id parameter, or 404 when it cannot be an id at all. */
export function idParam(value: string | undefined, what = 'That'): string {
  if (!value || !UUID.test(value)) throw new NotFound(what);
  return value.toLowerCase();
}
