/**
 * The backs of the batch's prints: each back as scanned beside the number of the print it belongs
 * to, and for editors a choice to pair a waiting back with a print, or to unpair one. Plain
 * buttons and a select, so it works from the keyboard.
 */
import { useState } from 'react';
import { backPictureUrl, PAIRED_BY_WORDS, type BackView } from '../lib/backs/types.ts';
import { api, ApiError } from './api-client.ts';

interface Props {
  batchId: string;
  initial: BackView[];
  /** The batch's prints a back may be paired with. */
  prints: { id: string; seq: number; originalName: string }[];
  canEdit: boolean;
}

export default function BatchBacks({ batchId, initial, prints, canEdit }: Props) {
  const [backs, setBacks] = useState(initial);
  const [chosen, setChosen] = useState<Record<string, string>>({});
  const [error, setError] = useState<{ backId: string; message: string } | null>(null);
  const [busy, setBusy] = useState<string | null>(null);
  const withBack = new Set(backs.map((b) => b.frontItemId).filter(Boolean));
  const free = prints.filter((p) => !withBack.has(p.id));

  async function change(back: BackView, printId: string | null) {
    setBusy(back.id);
    setError(null);
    try {
      const r = await api<{ back: BackView }>(`/api/batches/${batchId}/backs`, { body: { backId: back.id, printId } });
      setBacks((all) => all.map((b) => (b.id === back.id ? r.back : b)));
    } catch (err) {
      setError({ backId: back.id, message: (err as ApiError).message });
    } finally {
      setBusy(null);
    }
  }

  return (
    <ul className="mt-3 grid gap-3 sm:grid-cols-2 lg:grid-cols-3" data-backs>
      {backs.map((b) => (
        <li key={b.id} className="flex gap-3 rounded border border-paper-200 p-2" data-back={b.id}>
          <img src={backPictureUrl(b)} alt={`Back scan ${b.originalName}`} className="h-20 w-28 flex-none bg-paper-100 object-contain" loading="lazy" />
          <div className="min-w-0 text-sm">
            <p className="truncate text-ink-500" title={b.originalName}>{b.originalName}</p>
            {b.frontItemId ? (
              <p data-back-front>
                Back of <a className="underline" href={`/items/${b.frontItemId}`}>print {b.frontSeq}</a>
                {b.pairedBy && PAIRED_BY_WORDS[b.pairedBy] ? <span className="text-ink-500"> · {PAIRED_BY_WORDS[b.pairedBy]}</span> : null}
              </p>
            ) : (
              <p className="text-ink-700" data-back-waiting>Not paired with a print yet.</p>
            )}
            {canEdit &&
              (b.frontItemId ? (
                <button type="button" className="btn-quiet mt-1 py-1" disabled={busy === b.id} onClick={() => change(b, null)} data-back-unpair>
                  Unpair
                </button>
              ) : (
                <div className="mt-1 flex flex-wrap items-center gap-2">
                  <label className="sr-only" htmlFor={`pair-${b.id}`}>Print this is the back of</label>
                  <select id={`pair-${b.id}`} className="field py-1" value={chosen[b.id] ?? ''} onChange={(e) => setChosen({ ...chosen, [b.id]: e.target.value })} data-back-choice>
                    <option value="">Choose a print…</option>
                    {free.map((p) => (
                      <option key={p.id} value={p.id}>
                        Print {p.seq} ({p.originalName})
                      </option>
                    ))}
                  </select>
                  <button type="button" className="btn-primary py-1" disabled={!chosen[b.id] || busy === b.id} onClick={() => change(b, chosen[b.id])} data-back-pair>
                    Pair
                  </button>
                </div>
              ))}
            {error?.backId === b.id && (
              <p className="mt-1 text-danger-700" role="alert">
                {error.message}
              </p>
            )}
          </div>
        </li>
      ))}
    </ul>
  );
}
