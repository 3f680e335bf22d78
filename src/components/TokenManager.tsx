import { useState } from 'react';
import { api, ApiError } from './api-client.ts';
import { useHydrated } from './use-hydrated.ts';
import { formatDay, formatWhen } from '../lib/archive/when.ts';

interface Token { id: string; name: string; prefix: string; createdAt: string; lastUsedAt: string | null; revokedAt: string | null }

/** Personal API tokens: create (the secret is shown once), list, revoke. */
export default function TokenManager({ tokens: initial, appUrl, timeZone }: { tokens: Token[]; appUrl: string; timeZone: string }) {
  const [tokens, setTokens] = useState(initial);
  const [name, setName] = useState('');
  const [fresh, setFresh] = useState<string | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [copied, setCopied] = useState<string | null>(null);
  const hydrated = useHydrated();

  /** Copies the token; where the browser offers no clipboard (a plain-http address), selects it for Ctrl+C instead. */
  async function copy(token: string) {
    try {
      await navigator.clipboard.writeText(token);
      setCopied('Copied');
    } catch {
      const node = document.querySelector('[data-new-token]');
      if (node) window.getSelection()?.selectAllChildren(node);
      setCopied('Selected: press Ctrl+C');
    }
  }

  async function create(e: React.FormEvent) {
    e.preventDefault();
    setError(null);
    try {
      const t = await api<Token & { token: string }>('/api/tokens', { body: { name } });
      setFresh(t.token);
      setCopied(null);
      setTokens([{ ...t, createdAt: new Date().toISOString(), lastUsedAt: null, revokedAt: null }, ...tokens]);
      setName('');
    } catch (err) {
      setError(err instanceof ApiError ? err.message : String(err));
    }
  }

  async function revoke(t: Token) {
    if (!window.confirm(`Revoke the token "${t.name}"? Scripts using it stop working at once.`)) return;
    try {
      await api(`/api/tokens/${t.id}`, { method: 'DELETE' });
      setTokens(tokens.map((x) => (x.id === t.id ? { ...x, revokedAt: new Date().toISOString() } : x)));
    } catch (err) {
      setError(err instanceof ApiError ? err.message : String(err));
    }
  }

  return (
    <fieldset disabled={!hydrated} className="space-y-4">
      <form onSubmit={create} className="flex flex-wrap items-end gap-3">
        <div className="min-w-[16rem] flex-1">
          <label className="label" htmlFor="token-name">Name (for example, the scanning station)</label>
          <input id="token-name" className="field" required maxLength={120} value={name} onChange={(e) => setName(e.target.value)} />
        </div>
        <button className="btn-primary" type="submit">Create token</button>
      </form>
      {error && <p className="notice-error" role="alert">{error}</p>}
      {fresh && (
        <div className="notice-caution" role="status">
          <p className="font-medium">Copy this token now: it is not shown again.</p>
          <div className="mt-2 flex items-start gap-2">
            <code className="block flex-1 break-all rounded bg-white px-2 py-1 font-mono text-xs text-ink-900" data-new-token>{fresh}</code>
            <button type="button" className="btn-quiet py-1 text-xs" onClick={() => void copy(fresh)} data-copy-token>{copied ?? 'Copy'}</button>
          </div>
          <p className="mt-2 text-xs">Use it as <code>Authorization: Bearer …</code>, e.g. <code>curl -H "Authorization: Bearer $TOKEN" {appUrl}/api/me</code></p>
        </div>
      )}
      <table className="w-full text-left text-sm">
        <thead className="text-ink-500"><tr><th className="py-2 font-medium">Name</th><th className="font-medium">Starts with</th><th className="font-medium">Created</th><th className="font-medium">Last used</th><th><span className="sr-only">Actions</span></th></tr></thead>
        <tbody>
          {tokens.length === 0 && <tr><td colSpan={5} className="py-3 text-ink-500">No tokens yet.</td></tr>}
          {tokens.map((t) => (
            <tr key={t.id} className="border-t border-paper-200" data-token={t.name}>
              <td className="py-2">{t.name}</td>
              <td><code>{t.prefix}…</code></td>
              <td>{formatDay(t.createdAt, timeZone)}</td>
              <td>{t.lastUsedAt ? formatWhen(t.lastUsedAt, timeZone) : 'never'}</td>
              <td className="text-right">{t.revokedAt ? <span className="text-ink-500">revoked</span> : <button className="btn-danger py-1" type="button" onClick={() => revoke(t)}>Revoke</button>}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </fieldset>
  );
}
