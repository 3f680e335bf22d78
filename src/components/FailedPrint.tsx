/**
 * What an editor can do with a print whose scan could not be read: try it again (a file copied
 * while the upload was cut short often reads the second time), or remove it from the batch.
 */
import { useState } from 'react';
import { api, ApiError } from './api-client.ts';
import { watchBatch } from './live-batch.ts';

interface Props {
  itemId: string;
  batchId: string;
  seq: number;
}

export default function FailedPrint({ itemId, batchId, seq }: Props) {
  const [confirming, setConfirming] = useState(false);
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string } | null>(null);

  async function retry() {
    setBusy(true);
    setMessage(null);
    try {
      await api(`/api/items/${itemId}/retry`, { body: {} });
      setMessage({ kind: 'info', text: `Print ${seq} is being read again. This page shows it once it is ready.` });
      await waitForOutcome();
    } catch (err) {
      setMessage({ kind: 'error', text: (err as ApiError).message });
    } finally {
      setBusy(false);
    }
  }

  /** Follows the print (pushed by the server) until it is ready (then opens it for review) or has failed again (then says why). */
  function waitForOutcome(): Promise<void> {
    return new Promise((resolve) => {
      const stop = watchBatch(batchId, {
        items: (items) => {
          const print = items.find((i) => i.id === itemId);
          if (print?.state === 'ready') {
            stop();
            window.location.reload();
            resolve();
          } else if (print?.state === 'failed') {
            stop();
            setMessage({ kind: 'error', text: `It could not be read this time either: ${print.failureReason ?? 'no reason given'}` });
            resolve();
          }
        },
      });
    });
  }

  async function remove() {
    setBusy(true);
    try {
      await api(`/api/items/${itemId}/removal`, { body: { confirm: true } });
      window.location.assign(`/batches/${batchId}`);
    } catch (err) {
      setMessage({ kind: 'error', text: (err as ApiError).message });
      setBusy(false);
    }
  }

  return (
    <div className="mt-4 space-y-3">
      <div className="flex flex-wrap gap-2">
        <button type="button" className="btn-primary" disabled={busy} onClick={() => void retry()} data-retry>Try again</button>
        <button type="button" className="btn-quiet text-danger-700" disabled={busy} onClick={() => setConfirming(true)} aria-expanded={confirming} data-remove-print>Remove this print…</button>
      </div>
      {confirming && (
        <div className="rounded-md border border-paper-300 bg-paper-50 p-3 text-sm" role="alertdialog" aria-labelledby="remove-print-what" data-remove-print-panel>
          <p id="remove-print-what" className="text-ink-900">Remove print {seq} from the batch? Its scan could not be read, so nothing else goes with it.</p>
          <p className="mt-1 text-xs text-ink-500">Recently removed keeps it for 30 days; after that the file is deleted for good.</p>
          <div className="mt-2 flex gap-2">
            <button type="button" className="btn-primary bg-danger-700 py-1.5" disabled={busy} onClick={() => void remove()} data-confirm-remove>Remove print {seq}</button>
            <button type="button" className="btn-quiet py-1.5" onClick={() => setConfirming(false)}>Keep it</button>
          </div>
        </div>
      )}
      <div aria-live="polite">{message && <p className={message.kind === 'info' ? 'notice' : 'notice-error'} data-failed-message>{message.text}</p>}</div>
    </div>
  );
}
