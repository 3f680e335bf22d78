/** The "Recently removed" list: removed batches and prints, each with the day it goes for good and a Restore button. */
import { useState } from 'react';
import { api, ApiError } from './api-client.ts';
import type { RemovedEntry } from '../lib/review/types.ts';
import { formatDay } from '../lib/archive/when.ts';

const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`;

export default function RecentlyRemoved({ entries: initial, canRestore, timeZone }: { entries: RemovedEntry[]; canRestore: boolean; timeZone: string }) {
  const day = (iso: string) => formatDay(iso, timeZone);
  const [entries, setEntries] = useState(initial);
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string; href?: string } | null>(null);
  const [busy, setBusy] = useState<string | null>(null);

  async function restore(e: RemovedEntry) {
    setBusy(e.id);
    setMessage(null);
    try {
      const r = await api<{ batch?: { id: string; name: string; prints: number }; item?: { id: string; batchId: string; seq: number } }>('/api/removed', { body: { kind: e.kind, id: e.id } });
      setEntries((list) => list.filter((x) => x.id !== e.id));
      setMessage(
        r.batch
          ? { kind: 'info', text: `Restored the batch "${r.batch.name}" with ${plural(r.batch.prints, 'print')}.`, href: `/batches/${r.batch.id}` }
          : { kind: 'info', text: `Restored print ${r.item!.seq} to "${e.batchName}".`, href: `/batches/${r.item!.batchId}` },
      );
    } catch (err) {
      setMessage({ kind: 'error', text: (err as ApiError).message });
    } finally {
      setBusy(null);
    }
  }

  return (
    <div className="space-y-4">
      <div aria-live="polite">
        {message && (
          <p className={message.kind === 'info' ? 'notice' : 'notice-error'} data-restore-message>
            {message.text} {message.href && <a className="underline" href={message.href}>Open the batch</a>}
          </p>
        )}
      </div>
      {entries.length === 0 ? (
        <p className="card text-ink-700" data-empty-state>Nothing has been removed in the last 30 days.</p>
      ) : (
        <ul className="card divide-y divide-paper-200 p-0" data-removed-list>
          {entries.map((e) => (
            <li key={e.id} className="flex flex-wrap items-center gap-3 px-4 py-3" data-removed={e.kind} data-removed-id={e.id}>
              <div className="min-w-0 flex-1">
                <p className="font-medium text-ink-900">
                  {e.kind === 'batch' ? `Batch "${e.batchName}" (${plural(e.prints, 'print')})` : `Print ${e.seq} of "${e.batchName}"`}
                </p>
                <p className="text-xs text-ink-500">
                  {e.originalName && <>{e.originalName} · </>}removed {day(e.removedAt)} · deleted for good on {day(e.purgeAfter)}
                </p>
              </div>
              {canRestore && (
                <button type="button" className="btn-quiet py-1.5" disabled={busy !== null} onClick={() => void restore(e)} data-restore>
                  Restore
                </button>
              )}
            </li>
          ))}
        </ul>
      )}
    </div>
  );
}
