/**
 * The demo: an invented family archive (names, places and dates are made up for the demo)
 * with an owner, an editor and a viewer. Seeded only into a new, empty database.
 */
import { Archive, Membership, User, db } from '../index.ts';
import { hashPassword } from '../../src/lib/server/passwords.ts';
import type { Role } from '../../src/lib/auth/roles.ts';

export const DEMO_PASSWORD = 'faded-prints-1979';

export const DEMO_ARCHIVE = {
  slug: 'hartigan',
  name: 'Hartigan family archive',
  description: 'Prints from the Hartigan house in Lowmere: the hall cupboard shoeboxes and the green album (invented for the demo).',
};
export const SECOND_ARCHIVE = {
  slug: 'vossberg',
  name: 'Vossberg family archive',
  description: 'A neighbour family whose prints Ines is scanning as a favour (invented for the demo).',
};

export const DEMO_USERS: { email: string; name: string; role: Role }[] = [
  { email: 'ines@hartigan.example', name: 'Ines Hartigan', role: 'owner' },
  { email: 'rafe@hartigan.example', name: 'Rafe Hartigan', role: 'editor' },
  { email: 'aunt.maud@hartigan.example', name: 'Maud Pellow', role: 'viewer' },
];

/**
 * Seeds the demo when there is no archive yet; returns whether it did. The tests seed the
 * accounts only (`withContent: false`), without the demo batches of synthetic scans.
 */
export async function seedDemo({ withContent = true }: { withContent?: boolean } = {}): Promise<boolean> {
  const sequelize = db();
  if ((await Archive.count()) > 0) return false;
  const passwordHash = await hashPassword(DEMO_PASSWORD);
  await sequelize.transaction(async (transaction) => {
    const archive = await Archive.create(DEMO_ARCHIVE, { transaction });
    const second = await Archive.create(SECOND_ARCHIVE, { transaction });
    for (const u of DEMO_USERS) {
      const user = await User.create({ email: u.email, name: u.name, passwordHash, emailVerified: new Date() }, { transaction });
      await Membership.create({ archiveId: archive.id, userId: user.id, role: u.role }, { transaction });
      if (u.role === 'owner') await Membership.create({ archiveId: second.id, userId: user.id, role: 'owner' }, { transaction });
    }
  });
  if (withContent) for (const hook of afterSeedHooks) await hook();
  return true;
}

/** Later features add demo content (batches of synthetic scans) through these, run after the accounts exist. */
export const afterSeedHooks: (() => Promise<void>)[] = [];
afterSeedHooks.push(() => import('./demo-batches.ts').then((m) => m.seedDemoBatches()));
