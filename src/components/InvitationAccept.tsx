import { useState } from 'react';
import { api, ApiError } from './api-client.ts';
import { useHydrated } from './use-hydrated.ts';

interface Props { token: string; email: string; archiveName: string; needsAccount: boolean; signedInAs: string | null }

/** Accepting an invitation: a new person picks a name and password; an existing member just joins. */
export default function InvitationAccept(props: Props) {
  const [name, setName] = useState('');
  const [password, setPassword] = useState('');
  const [error, setError] = useState<ApiError | null>(null);
  const [busy, setBusy] = useState(false);
  const hydrated = useHydrated();

  async function accept(e: React.FormEvent) {
    e.preventDefault();
    setBusy(true);
    setError(null);
    try {
      const r = await api<{ redirect: string }>(`/api/invitations/${encodeURIComponent(props.token)}`, { body: props.needsAccount ? { name, password } : {} });
      window.location.assign(r.redirect);
    } catch (err) {
      setError(err instanceof ApiError ? err : new ApiError(0, 'error', String(err)));
      setBusy(false);
    }
  }

  return (
    <form onSubmit={accept}>
      <fieldset disabled={!hydrated} className="space-y-4">
      {error && <p className="notice-error" role="alert">{error.message}</p>}
      {props.needsAccount ? (
        <>
          <div>
            <label className="label" htmlFor="accept-name">Your name</label>
            <input id="accept-name" className="field" required value={name} onChange={(e) => setName(e.target.value)} autoComplete="name" />
            {error?.fields.name && <p className="mt-1 text-xs text-danger-700">{error.fields.name}</p>}
          </div>
          <div>
            <label className="label" htmlFor="accept-password">Choose a password (at least 10 characters)</label>
            <input id="accept-password" className="field" type="password" required minLength={10} value={password} onChange={(e) => setPassword(e.target.value)} autoComplete="new-password" />
            {error?.fields.password && <p className="mt-1 text-xs text-danger-700">{error.fields.password}</p>}
          </div>
        </>
      ) : (
        <p className="text-sm text-ink-700">{props.signedInAs ? `You are signed in as ${props.signedInAs}.` : `Sign in as ${props.email} first, then open this link again.`}</p>
      )}
      <button className="btn-primary w-full" type="submit" disabled={busy || (!props.needsAccount && !props.signedInAs)}>Join the {props.archiveName}</button>
      </fieldset>
    </form>
  );
}
