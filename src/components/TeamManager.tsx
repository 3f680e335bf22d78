import { useState } from 'react';
import { api, ApiError } from './api-client.ts';
import { useHydrated } from './use-hydrated.ts';
import { formatDay } from '../lib/archive/when.ts';

type Role = 'owner' | 'editor' | 'viewer';
interface Member { membershipId: string; userId: string; email: string; name: string | null; role: Role }
interface Invitation { id: string; email: string; role: Role; expiresAt: string }
interface Props { members: Member[]; invitations: Invitation[]; currentUserId: string; roleDescriptions: Record<Role, string>; timeZone: string }

const ROLES: Role[] = ['viewer', 'editor', 'owner'];

/** The owner's view of the team: invite by e-mail, change roles, remove members. */
export default function TeamManager(props: Props) {
  const [members, setMembers] = useState(props.members);
  const [invitations, setInvitations] = useState(props.invitations);
  const [email, setEmail] = useState('');
  const [role, setRole] = useState<Role>('viewer');
  const [message, setMessage] = useState<{ kind: 'ok' | 'error'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);
  const hydrated = useHydrated();

  const report = (err: unknown) => setMessage({ kind: 'error', text: err instanceof ApiError ? err.message + (Object.values(err.fields)[0] ? ` ${Object.values(err.fields)[0]}` : '') : String(err) });

  async function sendInvite(e: React.FormEvent) {
    e.preventDefault();
    setBusy(true);
    setMessage(null);
    try {
      const inv = await api<Invitation>('/api/team/invitations', { body: { email, role } });
      setInvitations([inv, ...invitations]);
      setMessage({ kind: 'ok', text: `Invitation sent to ${inv.email}.` });
      setEmail('');
    } catch (err) {
      report(err);
    } finally {
      setBusy(false);
    }
  }

  async function changeRole(m: Member, next: Role) {
    setMessage(null);
    try {
      await api(`/api/team/members/${m.membershipId}`, { method: 'PATCH', body: { role: next } });
      setMembers(members.map((x) => (x.membershipId === m.membershipId ? { ...x, role: next } : x)));
      setMessage({ kind: 'ok', text: `${m.name ?? m.email} is now ${next === 'viewer' ? 'a viewer' : `an ${next}`}.` });
    } catch (err) {
      report(err);
    }
  }

  async function remove(m: Member) {
    if (!window.confirm(`Remove ${m.name ?? m.email} from this archive?`)) return;
    setMessage(null);
    try {
      await api(`/api/team/members/${m.membershipId}`, { method: 'DELETE' });
      setMembers(members.filter((x) => x.membershipId !== m.membershipId));
    } catch (err) {
      report(err);
    }
  }

  async function withdraw(inv: Invitation) {
    try {
      await api(`/api/team/invitations/${inv.id}`, { method: 'DELETE' });
      setInvitations(invitations.filter((x) => x.id !== inv.id));
    } catch (err) {
      report(err);
    }
  }

  return (
    <fieldset disabled={!hydrated} className="space-y-6">
      {message && (
        <p role={message.kind === 'error' ? 'alert' : 'status'} className={message.kind === 'error' ? 'notice-error' : 'notice'} data-team-message>
          {message.text}
        </p>
      )}
      <section className="card" aria-labelledby="invite-heading">
        <h2 id="invite-heading">Invite someone</h2>
        <form onSubmit={sendInvite} className="mt-3 flex flex-wrap items-end gap-3">
          <div className="min-w-[16rem] flex-1">
            <label className="label" htmlFor="invite-email">E-mail</label>
            <input id="invite-email" className="field" type="email" required value={email} onChange={(e) => setEmail(e.target.value)} />
          </div>
          <div>
            <label className="label" htmlFor="invite-role">Role</label>
            <select id="invite-role" className="field" value={role} onChange={(e) => setRole(e.target.value as Role)}>
              {ROLES.map((r) => <option key={r} value={r}>{r}</option>)}
            </select>
          </div>
          <button className="btn-primary" type="submit" disabled={busy}>Send invitation</button>
        </form>
        <p className="mt-2 text-xs text-ink-500">{props.roleDescriptions[role]}</p>
      </section>

      <section className="card" aria-labelledby="members-heading">
        <h2 id="members-heading">Members</h2>
        <table className="mt-3 w-full text-left text-sm">
          <thead className="text-ink-500"><tr><th className="py-2 font-medium">Name</th><th className="font-medium">E-mail</th><th className="font-medium">Role</th><th><span className="sr-only">Actions</span></th></tr></thead>
          <tbody>
            {members.map((m) => (
              <tr key={m.membershipId} className="border-t border-paper-200" data-member={m.email}>
                <td className="py-2">{m.name ?? '—'}{m.userId === props.currentUserId && <span className="ml-1 text-ink-500">(you)</span>}</td>
                <td>{m.email}</td>
                <td>
                  <label className="sr-only" htmlFor={`role-${m.membershipId}`}>Role of {m.email}</label>
                  <select id={`role-${m.membershipId}`} className="field w-auto py-1" value={m.role} onChange={(e) => changeRole(m, e.target.value as Role)}>
                    {ROLES.map((r) => <option key={r} value={r}>{r}</option>)}
                  </select>
                </td>
                <td className="text-right"><button className="btn-danger py-1" type="button" onClick={() => remove(m)}>Remove</button></td>
              </tr>
            ))}
          </tbody>
        </table>
      </section>

      <section className="card" aria-labelledby="invitations-heading">
        <h2 id="invitations-heading">Open invitations</h2>
        {invitations.length === 0 ? <p className="mt-2 text-sm text-ink-500">None.</p> : (
          <ul className="mt-3 divide-y divide-paper-200 text-sm">
            {invitations.map((i) => (
              <li key={i.id} className="flex items-center justify-between py-2" data-invitation={i.email}>
                <span>{i.email} · {i.role} · until {formatDay(i.expiresAt, props.timeZone)}</span>
                <button className="btn-quiet py-1" type="button" onClick={() => withdraw(i)}>Withdraw</button>
              </li>
            ))}
          </ul>
        )}
      </section>
    </fieldset>
  );
}
