/**
 * The four decisions on a print, with the rescan form (is the negative there, where is it
 * kept, a note) and the decision already recorded.
 */
import { useEffect, useRef } from 'react';
import { DECISION_WORDS, NEGATIVE_AVAILABILITY, NEGATIVE_PLACES, NEGATIVE_WORDS, type NegativeAvailability } from '../../lib/review/words.ts';
import { useReview } from './store.ts';
import { formatWhen, pageTimeZone } from '../../lib/archive/when.ts';

export default function DecisionBar() {
  const item = useReview((s) => s.item);
  const busy = useReview((s) => s.busy);
  const canDecide = useReview((s) => s.canDecide);
  const rescanOpen = useReview((s) => s.rescanOpen);
  const rescan = useReview((s) => s.rescan);
  const { decide, setRescanOpen, setRescan } = useReview.getState();
  const firstField = useRef<HTMLInputElement>(null);

  useEffect(() => {
    if (rescanOpen) firstField.current?.focus();
  }, [rescanOpen]);

  if (!item) return null;
  const decided = item.decision
    ? `${DECISION_WORDS[item.decision]} by ${item.decidedBy?.name ?? 'someone'}, ${formatWhen(item.decidedAt!, pageTimeZone())}`
    : DECISION_WORDS.undecided;

  return (
    <section className="card p-4" aria-labelledby="decide-heading" data-decision-bar>
      <div className="flex flex-wrap items-center gap-2">
        <h2 id="decide-heading" className="mr-2 text-base">Decision</h2>
        <span className="text-sm text-ink-700" data-current-decision={item.decision ?? 'none'}>{decided}</span>
        {item.decision === 'rescan' && item.negativeLocation && <span className="text-sm text-ink-500">· negative: {item.negativeLocation}</span>}
      </div>
      {canDecide ? (
        <div className="mt-3 flex flex-wrap gap-2">
          <button type="button" className="btn-primary" disabled={busy} onClick={() => void decide('accepted')} data-decide="accepted">Accept <kbd className="rounded border border-paper-300 px-1 text-[11px] font-normal opacity-80">A</kbd></button>
          <button type="button" className="btn-quiet" disabled={busy} onClick={() => void decide('accepted_adjusted')} data-decide="accepted_adjusted">Accept with my changes <kbd className="rounded border border-paper-300 px-1 text-[11px] font-normal opacity-80">D</kbd></button>
          <button type="button" className="btn-quiet" disabled={busy} onClick={() => setRescanOpen(!rescanOpen)} aria-expanded={rescanOpen} aria-controls="rescan-form" data-decide="rescan">Set aside for rescan <kbd className="rounded border border-paper-300 px-1 text-[11px] font-normal opacity-80">R</kbd></button>
          <button type="button" className="btn-quiet" disabled={busy} onClick={() => void decide('skipped')} data-decide="skipped">Leave for later <kbd className="rounded border border-paper-300 px-1 text-[11px] font-normal opacity-80">L</kbd></button>
        </div>
      ) : (
        <p className="notice mt-3">You can look at the prints; an editor or owner makes the decisions.</p>
      )}
      {canDecide && rescanOpen && (
        <form
          id="rescan-form"
          className="mt-4 grid gap-3 rounded-md border border-paper-200 bg-paper-50 p-3 sm:grid-cols-2"
          onSubmit={(e) => {
            e.preventDefault();
            void decide('rescan');
          }}
          data-rescan-form
        >
          <fieldset className="sm:col-span-2">
            <legend className="label">Is the negative there?</legend>
            <div className="flex flex-wrap gap-4 text-sm">
              {NEGATIVE_AVAILABILITY.map((v, i) => (
                <label key={v} className="inline-flex items-center gap-1.5">
                  <input
                    ref={i === 0 ? firstField : undefined}
                    type="radio"
                    name="negative-available"
                    value={v}
                    checked={rescan.negativeAvailable === v}
                    onChange={() => setRescan({ negativeAvailable: v as NegativeAvailability })}
                    className="accent-lamp-600"
                  />
                  {NEGATIVE_WORDS[v]}
                </label>
              ))}
            </div>
          </fieldset>
          <div>
            <label htmlFor="negative-location" className="label">Where it is kept</label>
            <input id="negative-location" className="field" list="negative-places" maxLength={300} placeholder="e.g. sleeve 14 in the blue box" value={rescan.negativeLocation} onChange={(e) => setRescan({ negativeLocation: e.target.value })} />
            <datalist id="negative-places">{NEGATIVE_PLACES.map((p) => <option key={p} value={p} />)}</datalist>
          </div>
          <div>
            <label htmlFor="rescan-note" className="label">Note</label>
            <input id="rescan-note" className="field" maxLength={2000} placeholder="e.g. frames 8–10, same afternoon" value={rescan.rescanNote} onChange={(e) => setRescan({ rescanNote: e.target.value })} />
          </div>
          <div className="flex gap-2 sm:col-span-2">
            <button type="submit" className="btn-primary" disabled={busy} data-confirm-rescan>Set aside</button>
            <button type="button" className="btn-quiet" onClick={() => setRescanOpen(false)}>Cancel (Esc)</button>
          </div>
        </form>
      )}
    </section>
  );
}
