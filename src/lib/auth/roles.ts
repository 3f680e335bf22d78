/** The roles a member can hold in one archive, from least to most trusted. */
export const ROLES = ['viewer', 'editor', 'owner'] as const;
export type Role = (typeof ROLES)[number];

/** Plain-words description of each role, shown on the Team page. */
export const ROLE_DESCRIPTIONS: Record<Role, string> = {
  viewer: 'Looks at the prints and suggests captions, dates and people.',
  editor: 'Uploads scans, reviews corrections and makes exports.',
  owner: 'Everything an editor does, plus members, settings and deleting.',
};

/** True when `role` includes everything `needed` may do. */
export function roleAtLeast(role: Role | null | undefined, needed: Role): boolean {
  if (!role) return false;
  return ROLES.indexOf(role) >= ROLES.indexOf(needed);
}
