import { createHash, randomBytes } from 'node:crypto';
import { Op } from 'sequelize';
import { z } from 'zod';
import { Archive, Invitation, Membership, User, db } from '../../../db/index.ts';
import { ROLES, type Role } from '../auth/roles.ts';
import { recordAudit } from './audit.ts';
import { config } from './config.ts';
import { Conflict, InvalidInput, NotFound } from './errors.ts';
import { linkMail, sendMail } from './mailer.ts';
import { hashPassword } from './passwords.ts';

const INVITATION_DAYS = 14;

export const inviteSchema = z.object({
  email: z.string().trim().toLowerCase().email('Enter an e-mail address.').max(320),
  role: z.enum(ROLES),
});
export const roleChangeSchema = z.object({ role: z.enum(ROLES) });
export const acceptSchema = z.object({
  name: z.string().trim().min(1, 'Enter your name.').max(200),
  password: z.string().min(10, 'Use at least 10 characters.').max(200),
});

const hashToken = (t: string) => createHash('sha256').update(t).digest('hex');

interface Actor {
  userId: string;
  requestId?: string;
}

/** The members of an archive with their roles, and the open invitations. */
export async function listTeam(archiveId: string) {
  const members = await Membership.findAll({
    where: { archiveId },
    include: [{ model: User, as: 'user', attributes: ['id', 'email', 'name'] }],
    order: [['createdAt', 'ASC']],
  });
  const invitations = await Invitation.findAll({
    where: { archiveId, acceptedAt: null, revokedAt: null, expiresAt: { [Op.gt]: new Date() } },
    order: [['createdAt', 'DESC']],
  });
  return {
    members: members.map((m) => {
      const u = (m as Membership & { user: User }).user;
      return { membershipId: m.id, userId: u.id, email: u.email, name: u.name, role: m.role };
    }),
    invitations: invitations.map((i) => ({ id: i.id, email: i.email, role: i.role, expiresAt: i.expiresAt })),
  };
}

/** Invites someone by e-mail; the accept link goes only into the e-mail (the Outbox in development). */
export async function invite(archiveId: string, input: z.infer<typeof inviteSchema>, actor: Actor) {
  const archive = await Archive.findByPk(archiveId);
  if (!archive) throw new NotFound('That archive');
  const existingUser = await User.findOne({ where: { email: input.email } });
  if (existingUser && (await Membership.findOne({ where: { archiveId, userId: existingUser.id } }))) {
    throw new Conflict(`${input.email} is already a member of this archive.`, 'already_member');
  }
  const token = randomBytes(24).toString('base64url');
  const invitation = await Invitation.create({
    archiveId,
    email: input.email,
    role: input.role,
    tokenHash: hashToken(token),
    invitedBy: actor.userId,
    expiresAt: new Date(Date.now() + INVITATION_DAYS * 86400_000),
  });
  const inviter = await User.findByPk(actor.userId);
  const url = `${config().appUrl}/invite/${token}`;
  await sendMail(
    linkMail(
      input.email,
      `You are invited to the ${archive.name} on Drawerlight`,
      `${inviter?.name ?? 'A member'} invites you to join the ${archive.name} on Drawerlight as ${input.role === 'viewer' ? 'a viewer' : `an ${input.role}`}. The link works for ${INVITATION_DAYS} days.`,
      'Accept the invitation',
      url,
      'The photographs in a family archive show living people: please keep them within the family unless everyone shown agrees.',
    ),
  );
  await recordAudit({ archiveId, actorId: actor.userId, action: 'invitation.create', subjectType: 'invitation', subjectId: invitation.id, details: { email: input.email, role: input.role }, requestId: actor.requestId });
  return { id: invitation.id, email: invitation.email, role: invitation.role, expiresAt: invitation.expiresAt };
}

/** An open invitation by its token (for the accept page), or null. */
export async function findInvitation(token: string) {
  if (!token || token.length > 100) return null;
  const inv = await Invitation.findOne({
    where: { tokenHash: hashToken(token), acceptedAt: null, revokedAt: null, expiresAt: { [Op.gt]: new Date() } },
    include: [{ model: Archive, as: 'archive', attributes: ['id', 'name', 'slug'] }],
  });
  if (!inv) return null;
  const archive = (inv as Invitation & { archive: Archive }).archive;
  const existing = await User.findOne({ where: { email: inv.email }, attributes: ['id'] });
  return { invitation: inv, archive, hasAccount: Boolean(existing) };
}

/**
 * Accepts an invitation. A new person sets a name and password; someone who already has an
 * account is added to the archive (they prove who they are by being signed in as that address).
 */
export async function acceptInvitation(token: string, input: { name?: string; password?: string }, signedInUserId: string | null) {
  if (!token || token.length > 100) throw new NotFound('That invitation (it may have expired or been used)');
  const found = await Invitation.findOne({
    where: { tokenHash: hashToken(token), revokedAt: null, expiresAt: { [Op.gt]: new Date() } },
    include: [{ model: Archive, as: 'archive', attributes: ['id', 'name', 'slug'] }],
  });
  if (!found) throw new NotFound('That invitation (it may have expired or been used)');
  const archiveSlug = (found as Invitation & { archive: Archive }).archive.slug;
  const used = () => new Conflict('This invitation has been accepted already: sign in instead.', 'invitation_used');
  if (found.acceptedAt) throw used();
  return db().transaction(async (transaction) => {
    // Several accepts of one link at once (a double click, two tabs) queue on the row: the first
    // one in accepts it, the others find it accepted.
    const invitation = await Invitation.findByPk(found.id, { transaction, lock: transaction.LOCK.UPDATE });
    if (!invitation || invitation.acceptedAt) throw used();
    let user = await User.findOne({ where: { email: invitation.email }, transaction });
    if (user) {
      if (user.id !== signedInUserId) {
        throw new Conflict(`An account for ${invitation.email} exists already: sign in as that address first, then open the link again.`, 'sign_in_first');
      }
    } else {
      const parsed = acceptSchema.safeParse(input);
      if (!parsed.success) {
        const fields: Record<string, string> = {};
        for (const i of parsed.error.issues) fields[i.path.join('.')] ??= i.message;
        throw new InvalidInput('Choose a name and a password.', fields);
      }
      user = await User.create({ email: invitation.email, name: parsed.data.name, passwordHash: await hashPassword(parsed.data.password), emailVerified: new Date() }, { transaction });
    }
    await Membership.findOrCreate({ where: { archiveId: invitation.archiveId, userId: user.id }, defaults: { archiveId: invitation.archiveId, userId: user.id, role: invitation.role }, transaction });
    await invitation.update({ acceptedAt: new Date() }, { transaction });
    await recordAudit({ archiveId: invitation.archiveId, actorId: user.id, action: 'invitation.accept', subjectType: 'invitation', subjectId: invitation.id, details: { role: invitation.role } }, transaction);
    return { user, archiveSlug };
  });
}

export async function revokeInvitation(archiveId: string, id: string, actor: Actor) {
  const inv = await Invitation.findOne({ where: { id, archiveId } });
  if (!inv) throw new NotFound('That invitation');
  await inv.update({ revokedAt: new Date() });
  await recordAudit({ archiveId, actorId: actor.userId, action: 'invitation.revoke', subjectType: 'invitation', subjectId: id, requestId: actor.requestId });
}

async function ownerCount(archiveId: string, transaction: import('sequelize').Transaction) {
  return Membership.count({ where: { archiveId, role: 'owner' }, transaction });
}

/** Throws 404 unless `membershipId` is a member of `archiveId` (checked before reading a request body). */
export async function requireMember(archiveId: string, membershipId: string): Promise<void> {
  if (!(await Membership.count({ where: { id: membershipId, archiveId } }))) throw new NotFound('That member');
}

/** Changes a member's role; the last owner cannot be demoted. */
export async function changeRole(archiveId: string, membershipId: string, role: Role, actor: Actor) {
  return db().transaction(async (transaction) => {
    // Lock the archive's owner rows so two owners demoting each other cannot leave none.
    await Membership.findAll({ where: { archiveId, role: 'owner' }, lock: transaction.LOCK.UPDATE, transaction });
    const m = await Membership.findOne({ where: { id: membershipId, archiveId }, transaction });
    if (!m) throw new NotFound('That member');
    if (m.role === 'owner' && role !== 'owner' && (await ownerCount(archiveId, transaction)) <= 1) {
      throw new Conflict('An archive needs at least one owner: make someone else an owner first.', 'last_owner');
    }
    const from = m.role;
    await m.update({ role }, { transaction });
    await recordAudit({ archiveId, actorId: actor.userId, action: 'member.role', subjectType: 'membership', subjectId: m.id, details: { from, to: role }, requestId: actor.requestId }, transaction);
    return { membershipId: m.id, role };
  });
}

/** Removes a member; the last owner cannot be removed. */
export async function removeMember(archiveId: string, membershipId: string, actor: Actor) {
  await db().transaction(async (transaction) => {
    await Membership.findAll({ where: { archiveId, role: 'owner' }, lock: transaction.LOCK.UPDATE, transaction });
    const m = await Membership.findOne({ where: { id: membershipId, archiveId }, transaction });
    if (!m) throw new NotFound('That member');
    if (m.role === 'owner' && (await ownerCount(archiveId, transaction)) <= 1) {
      throw new Conflict('The last owner cannot be removed: make someone else an owner first.', 'last_owner');
    }
    await m.destroy({ transaction });
    await recordAudit({ archiveId, actorId: actor.userId, action: 'member.remove', subjectType: 'membership', subjectId: m.id, details: { userId: m.userId }, requestId: actor.requestId }, transaction);
  });
}
