/**
 * "Remove this batch…": asks the server what would go (prints, decisions, captions, corrections
 * made by hand), says it, and removes the batch only once that is confirmed.
 */
import { useState } from 'react';
import { api, ApiError } from './api-client.ts';
import { formatDay, pageTimeZone } from '../lib/archive/when.ts';

interface Summary {
  name: string;
  prints: number;
  decided: number;
  captioned: number;
  adjusted: number;
  purgeAfter: string;
}

const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`;
// shown only after a click, in the browser: the page gives the archive's time zone
const day = (iso: string) => formatDay(iso, pageTimeZone());

export default function RemoveBatch({ batchId }: { batchId: string }) {
  const [summary, setSummary] = useState<Summary | null>(null);
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);

  async function ask() {
    setError(null);
    try {
      setSummary(await api<Summary>(`/api/batches/${batchId}/removal`));
    } catch (err) {
      setError((err as ApiError).message);
    }
  }

  async function remove() {
    setBusy(true);
    try {
      await api(`/api/batches/${batchId}/removal`, { body: { confirm: true } });
      window.location.assign('/removed');
    } catch (err) {
      setError((err as ApiError).message);
      setBusy(false);
    }
  }

  if (!summary) {
    return (
      <>
        <button type="button" className="btn-quiet text-danger-700" onClick={() => void ask()} data-remove-batch>Remove batch…</button>
        {error && <p className="notice-error" role="alert">{error}</p>}
      </>
    );
  }
  const kept = [
    summary.decided && `${plural(summary.decided, 'decision')}`,
    summary.captioned && `captions on ${plural(summary.captioned, 'print')}`,
    summary.adjusted && `corrections made by hand on ${plural(summary.adjusted, 'print')}`,
  ].filter(Boolean);
  return (
    <div className="card w-full max-w-xl space-y-2" role="alertdialog" aria-labelledby="remove-batch-what" data-remove-batch-panel>
      <p id="remove-batch-what" className="font-medium text-ink-900">
        Remove "{summary.name}" and its {plural(summary.prints, 'print')}{kept.length ? `, with ${kept.join(', ')}` : ''}?
      </p>
      <p className="text-sm text-ink-700">
        The batch leaves every list, the rescan list and exports at once. Recently removed keeps it, original scans included, until {day(summary.purgeAfter)}; after that it is deleted for good.
      </p>
      {error && <p className="notice-error" role="alert">{error}</p>}
      <div className="flex gap-2">
        <button type="button" className="btn-primary bg-danger-700" disabled={busy} onClick={() => void remove()} data-confirm-remove-batch>Remove the batch</button>
        <button type="button" className="btn-quiet" onClick={() => setSummary(null)}>Keep it</button>
      </div>
    </div>
  );
}
