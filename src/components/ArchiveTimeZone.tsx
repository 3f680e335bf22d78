import { useState } from 'react';
import { formatWhen } from '../lib/archive/when.ts';
import { api, ApiError } from './api-client.ts';

interface Props {
  timeZone: string;
  /** IANA names offered (the server's list, so the page and the island agree). */
  zones: string[];
  /** A moment to show as an example, fixed by the server. */
  example: string;
}

/** The owner's choice of the time zone every date and time of the archive is shown in. */
export default function ArchiveTimeZone({ timeZone, zones, example }: Props) {
  const [zone, setZone] = useState(timeZone);
  const [saved, setSaved] = useState(timeZone);
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string } | null>(null);
  const [busy, setBusy] = useState(false);

  async function save(e: React.FormEvent) {
    e.preventDefault();
    setBusy(true);
    setMessage(null);
    try {
      const r = await api<{ timeZone: string }>('/api/archive', { method: 'PATCH', body: { timeZone: zone } });
      setSaved(r.timeZone);
      setMessage({ kind: 'info', text: `Dates and times are now shown in ${r.timeZone} time.` });
    } catch (err) {
      setMessage({ kind: 'error', text: err instanceof ApiError ? err.message : String(err) });
    } finally {
      setBusy(false);
    }
  }

  return (
    <form className="flex flex-wrap items-end gap-3" onSubmit={save} data-time-zone-form>
      <div className="min-w-0">
        <label className="label" htmlFor="time-zone">Time zone</label>
        <select id="time-zone" className="field w-auto max-w-full" value={zone} onChange={(e) => setZone(e.target.value)}>
          {zones.map((z) => <option key={z} value={z}>{z}</option>)}
        </select>
      </div>
      <button className="btn-primary" type="submit" disabled={busy || zone === saved}>Save</button>
      <p className="w-full text-xs text-ink-500">For example, the moment this page was made reads {formatWhen(example, zone)}.</p>
      {message && <p className={message.kind === 'info' ? 'notice w-full' : 'notice-error w-full'} role={message.kind === 'info' ? 'status' : 'alert'}>{message.text}</p>}
    </form>
  );
}
