import { createHash, randomBytes } from 'node:crypto';
import { ApiToken, User } from '../../../db/index.ts';
import { InvalidInput, NotFound } from './errors.ts';

const TOKEN_PREFIX = 'dlt_';

function hashToken(token: string): string {
  return createHash('sha256').update(token).digest('hex');
}

/**
 * Creates a personal API token. The secret is 256 random bits, so a plain SHA-256 is a safe
 * way to store it (a slow KDF protects guessable passwords, not random keys). Returned once.
 */
export async function createApiToken(userId: string, name: string): Promise<{ token: string; record: ApiToken }> {
  const label = name.trim();
  if (!label || label.length > 120) throw new InvalidInput('Give the token a name of 1 to 120 characters.', { name: 'Required, at most 120 characters.' });
  const token = TOKEN_PREFIX + randomBytes(32).toString('base64url');
  const record = await ApiToken.create({ userId, name: label, tokenHash: hashToken(token), prefix: token.slice(0, 10) });
  return { token, record };
}

/** The user a bearer token belongs to, or null when it is unknown or revoked. */
export async function userForToken(token: string): Promise<{ user: User; tokenId: string } | null> {
  if (!token.startsWith(TOKEN_PREFIX) || token.length > 100) return null;
  // the token and its user in one query: every scripted upload asks
  const record = (await ApiToken.findOne({ where: { tokenHash: hashToken(token), revokedAt: null }, include: [{ model: User, as: 'user', required: true }] })) as (ApiToken & { user: User }) | null;
  if (!record) return null;
  const user = record.user;
  // Touch last-used at most once a minute to keep scripted ingest from writing on every call.
  if (!record.lastUsedAt || Date.now() - record.lastUsedAt.getTime() > 60_000) {
    await record.update({ lastUsedAt: new Date() });
  }
  return { user, tokenId: record.id };
}

export async function listApiTokens(userId: string) {
  const rows = await ApiToken.findAll({ where: { userId }, order: [['createdAt', 'DESC']] });
  return rows.map((t) => ({
    id: t.id,
    name: t.name,
    prefix: t.prefix,
    createdAt: t.createdAt,
    lastUsedAt: t.lastUsedAt,
    revokedAt: t.revokedAt,
  }));
}

export async function revokeApiToken(userId: string, id: string): Promise<void> {
  const t = await ApiToken.findOne({ where: { id, userId } });
  if (!t) throw new NotFound('That token');
  if (!t.revokedAt) await t.update({ revokedAt: new Date() });
}
