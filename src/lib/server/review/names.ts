/** The names reviewers see for the people who decided or saved something. */
import type { Transaction } from 'sequelize';
import { User } from '../../../../db/index.ts';

const userNames = new Map<string, string>();
/** The display name of a user (cached: names are shown on every print), or "a former member" for a removed one. */
export async function nameOf(userId: string | null | undefined, transaction?: Transaction): Promise<{ id: string; name: string } | null> {
  if (!userId) return null;
  if (!userNames.has(userId)) {
    const u = await User.findByPk(userId, { attributes: ['id', 'name', 'email'], transaction });
    if (!u) return { id: userId, name: 'a former member' };
    userNames.set(userId, u.name ?? u.email);
  }
  return { id: userId, name: userNames.get(userId)! };
}
