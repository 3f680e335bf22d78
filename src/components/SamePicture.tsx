/**
 * On a print's page: other prints of the archive that look like the same picture, each shown beside
 * this one, with the editor's choices (keep both, keep one, link them; for a rescan from the
 * negative, use it as the set-aside print's scan), and the prints already linked to this one.
 * Follows the print the review shows (its store), since Previous and Next do not reload the page.
 */
import { useCallback, useEffect, useState } from 'react';
import type { SamePictureChoice } from '../lib/review/same-picture.ts';
import type { OtherPrint, SamePicturePair } from '../lib/server/same-picture.ts';
import { api, ApiError } from './api-client.ts';
import { useReview } from './review/store.ts';

type Print = OtherPrint;
type Pair = SamePicturePair;

interface Props {
  itemId: string;
  canDecide: boolean;
}

const named = (p: Print) => `Print ${p.seq} of “${p.batchName}”`;

export default function SamePicture({ itemId, canDecide }: Props) {
  const shown = useReview((s) => s.item?.id) ?? itemId;
  const [data, setData] = useState<{ thisPrint: Print; pairs: Pair[] } | null>(null);
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string } | null>(null);

  const load = useCallback(async (id: string) => {
    try {
      setData(await api<{ thisPrint: Print; pairs: Pair[] }>(`/api/items/${id}/same-picture`));
    } catch {
      setData(null);
    }
  }, []);

  useEffect(() => {
    setMessage(null);
    void load(shown);
  }, [shown, load]);

  async function decide(pair: Pair, choice: SamePictureChoice, from = shown, otherId = pair.other.id) {
    setBusy(true);
    setMessage(null);
    try {
      const done = await api<{ removedItemId: string | null; keptItemId: string | null }>(`/api/items/${from}/same-picture`, { body: { otherId, choice } });
      if (done.removedItemId === shown && done.keptItemId) {
        // this print went: open the one that stays
        window.location.assign(`/items/${done.keptItemId}`);
        return;
      }
      const said: Record<SamePictureChoice, string> = {
        keep_both: 'Both prints are kept; they will not be suggested as the same picture again.',
        keep_this: `${named(pair.other)} was removed. It can be brought back from Recently removed for 30 days.`,
        keep_other: '',
        link: `Linked with ${named(pair.other)} as the same picture.`,
        use_rescan: 'The rescan is now this print’s scan; the print is being measured again and has left the rescan list.',
      };
      setMessage({ kind: 'info', text: said[choice] });
      if (choice === 'use_rescan') window.location.reload();
      await load(shown);
    } catch (err) {
      setMessage({ kind: 'error', text: err instanceof ApiError ? err.message : 'The server could not be reached. Nothing was changed; try again.' });
    } finally {
      setBusy(false);
    }
  }

  if (!data) return null;
  const open = data.pairs.filter((p) => p.outcome === 'open');
  const linked = data.pairs.filter((p) => p.outcome === 'linked');
  // an empty marker says the look-up for this print is done (and found nothing)
  if (!open.length && !linked.length && !message) return <span hidden data-same-picture-none={data.thisPrint.id} />;
  return (
    <section className="mt-4 space-y-3" aria-label="The same picture elsewhere" data-same-picture>
      {message && <p className={message.kind === 'error' ? 'notice-error' : 'notice'} role="status" data-same-picture-message>{message.text}</p>}
      {open.map((pair) => (
        <div key={pair.pairId} className="notice" data-same-picture-pair={pair.other.id}>
          <p className="font-medium text-ink-900">
            {pair.rescanOf
              ? `This rescan looks like ${named(pair.other)}, which was set aside for a rescan from its negative.`
              : pair.rescanFound
                ? `A rescan from the negative looks like this print: ${named(pair.other)}.`
                : `This looks like ${named(pair.other)}.`}
          </p>
          <div className="mt-3 grid max-w-3xl grid-cols-2 gap-3">
            <figure>
              <img src={data.thisPrint.previewUrl} alt={`This print (${data.thisPrint.originalName})`} className="max-h-64 w-full rounded border border-paper-300 bg-white object-contain" data-same-picture-this />
              <figcaption className="mt-1 text-xs text-ink-500">This print · {data.thisPrint.originalName}</figcaption>
            </figure>
            <figure>
              <img src={pair.other.previewUrl} alt={`${named(pair.other)} (${pair.other.originalName})`} className="max-h-64 w-full rounded border border-paper-300 bg-white object-contain" data-same-picture-other />
              <figcaption className="mt-1 text-xs text-ink-500">
                <a href={`/items/${pair.other.id}`}>{named(pair.other)}</a> · {pair.other.originalName}
              </figcaption>
            </figure>
          </div>
          {canDecide && (
            <div className="mt-3 flex flex-wrap gap-2">
              {pair.rescanOf && (
                <button type="button" className="btn-primary py-1.5" disabled={busy} onClick={() => decide(pair, 'use_rescan')} data-choice="use_rescan">
                  Use this scan for Print {pair.other.seq}
                </button>
              )}
              {pair.rescanFound && (
                <button type="button" className="btn-primary py-1.5" disabled={busy} onClick={() => decide(pair, 'use_rescan', pair.other.id, shown)} data-choice="use_rescan">
                  Use the rescan for this print
                </button>
              )}
              <button type="button" className="btn-quiet py-1.5" disabled={busy} onClick={() => decide(pair, 'link')} data-choice="link">Link as the same picture</button>
              <button type="button" className="btn-quiet py-1.5" disabled={busy} onClick={() => decide(pair, 'keep_this')} data-choice="keep_this">Keep this one, remove the other</button>
              <button type="button" className="btn-quiet py-1.5" disabled={busy} onClick={() => decide(pair, 'keep_other')} data-choice="keep_other">Keep the other, remove this one</button>
              <button type="button" className="btn-quiet py-1.5" disabled={busy} onClick={() => decide(pair, 'keep_both')} data-choice="keep_both">Not the same: keep both</button>
            </div>
          )}
        </div>
      ))}
      {linked.length > 0 && (
        <p className="text-sm text-ink-700" data-same-picture-linked>
          The same picture as{' '}
          {linked.map((pair, i) => (
            <span key={pair.pairId}>
              {i > 0 && ', '}
              <a href={`/items/${pair.other.id}`} data-linked-print={pair.other.id}>{named(pair.other)}</a>
            </span>
          ))}
          .
        </p>
      )}
    </section>
  );
}
