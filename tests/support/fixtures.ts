/**
 * Test data made through the real models: an archive of its own per test file (unique slug),
 * with an owner, an editor and a viewer who can sign in, and API tokens for each.
 */
import { randomBytes } from 'node:crypto';
import { Archive, Membership, User, db } from '../../db/index.ts';
import type { Role } from '../../src/lib/auth/roles.ts';
import { createApiToken } from '../../src/lib/server/api-tokens.ts';
import { hashPassword } from '../../src/lib/server/passwords.ts';
import { Client, signedIn } from './http.ts';

export const TEST_PASSWORD = 'test-password-for-prints';
let hashed: Promise<string> | undefined;

export interface TestMember {
  id: string;
  email: string;
  role: Role;
  token: string;
}
export interface TestArchive {
  id: string;
  slug: string;
  name: string;
  owner: TestMember;
  editor: TestMember;
  viewer: TestMember;
}

/** A fresh archive with one member of each role. */
export async function makeArchive(label = 'test'): Promise<TestArchive> {
  db();
  hashed ??= hashPassword(TEST_PASSWORD);
  const passwordHash = await hashed;
  const tag = `${label}-${randomBytes(4).toString('hex')}`.toLowerCase().replace(/[^a-z0-9-]/g, '-');
  const archive = await Archive.create({ slug: tag, name: `Archive ${tag}` });
  const make = async (role: Role): Promise<TestMember> => {
    const user = await User.create({ email: `${role}.${tag}@test.example`, name: `${role} ${tag}`, passwordHash });
    await Membership.create({ archiveId: archive.id, userId: user.id, role });
    const { token } = await createApiToken(user.id, `${role} test token`);
    return { id: user.id, email: user.email, role, token };
  };
  return { id: archive.id, slug: archive.slug, name: archive.name, owner: await make('owner'), editor: await make('editor'), viewer: await make('viewer') };
}

/** A client using `member`'s API token. */
export function asToken(member: TestMember): Client {
  return new Client(member.token);
}

/** A client signed in with `member`'s password (a cookie session). */
export function asSession(member: TestMember): Promise<Client> {
  return signedIn(member.email, TEST_PASSWORD);
}
