import { useEffect, useState } from 'react';
import { watchArchiveBatches, watchBatch } from './live-batch.ts';
import { emptyCounts, isSettled, ITEM_STATE_LABELS, ITEM_STATES, type StateCounts } from '../lib/batches/schemas.ts';

interface Props {
  batchId: string;
  /** Counts as the page saw them, shown until the first live update. */
  initial?: StateCounts;
  /** Smaller, for lists. */
  compact?: boolean;
}

const BAR_CLASS: Record<string, string> = { ready: 'bg-lamp-600', failed: 'bg-danger-700', analysing: 'bg-lamp-500/50', queued: 'bg-paper-300' };

/** Live counts per state of one batch, with a progress bar; updated by the server's pushed events (live-batch.ts). */
export default function BatchProgress({ batchId, initial, compact = false }: Props) {
  const [counts, setCounts] = useState<StateCounts>(initial ?? emptyCounts());
  const [live, setLive] = useState(false);

  useEffect(() => {
    const handlers = {
      counts: (id: string, next: StateCounts) => {
        if (id === batchId) setCounts(next);
      },
      live: setLive,
    };
    // Lists show many batches at once: one stream for the whole list (a browser allows only six
    // open connections per host); a batch's own page follows that batch.
    return compact ? watchArchiveBatches(handlers) : watchBatch(batchId, handlers);
  }, [batchId, compact]);

  const done = counts.ready + counts.failed;
  const percent = counts.total ? Math.round((done / counts.total) * 100) : 0;
  const settled = isSettled(counts);
  return (
    <div data-batch-progress data-settled={settled ? 'true' : 'false'} className={compact ? 'space-y-1' : 'space-y-2'}>
      <div
        className="flex h-2.5 w-full overflow-hidden rounded-full bg-paper-100"
        role="progressbar"
        aria-label="Scans processed"
        aria-valuemin={0}
        aria-valuemax={counts.total}
        aria-valuenow={done}
        aria-valuetext={`${done} of ${counts.total} processed`}
      >
        {counts.total > 0 && ITEM_STATES.filter((s) => s === 'ready' || s === 'failed' || s === 'analysing').map((s) => (
          <div key={s} className={BAR_CLASS[s]} style={{ width: `${(counts[s] / counts.total) * 100}%` }} />
        ))}
      </div>
      <p className="text-sm text-ink-700" aria-live="polite">
        {counts.total === 0 ? 'No scans yet.' : settled ? `All ${counts.total} processed.` : `${done} of ${counts.total} processed (${percent} %).`}
        {!compact && !live && counts.total > 0 && !settled && <span className="ml-2 text-ink-500">(reconnecting …)</span>}
      </p>
      <ul className={`flex flex-wrap gap-x-4 gap-y-1 text-sm ${compact ? 'text-ink-500' : 'text-ink-700'}`}>
        {ITEM_STATES.map((s) => (
          <li key={s} data-count={s}>
            <span className={`mr-1.5 inline-block h-2 w-2 rounded-full ${BAR_CLASS[s]}`} aria-hidden="true" />
            {ITEM_STATE_LABELS[s]}: <span className="font-medium tabular-nums" data-value>{counts[s]}</span>
          </li>
        ))}
      </ul>
      {!compact && counts.ready > 0 && <FullSizeLine counts={counts} />}
    </div>
  );
}

/**
 * The full-size corrected images: a print counts once its first render is made, so the figure
 * never goes back; prints whose correction was replaced afterwards (by the batch's shared estimate
 * or by a change someone saved) are said to be made again, with the reason.
 */
function FullSizeLine({ counts }: { counts: StateCounts }) {
  const fullSize = counts.fullSize ?? 0;
  const remaking = counts.remaking ?? 0;
  const shared = Math.min(counts.remakingShared ?? 0, remaking);
  const made = fullSize + remaking;
  const byEstimate = "with the batch's shared estimate, which refined their proposals once every scan was in";
  const bySaved = 'with a newer correction saved since';
  const why = shared === remaking ? ` ${byEstimate}` : shared === 0 ? ` ${bySaved}` : `: ${shared} ${byEstimate}; ${remaking - shared} ${bySaved}`;
  return (
    <p className="text-sm text-ink-500" data-count="full-size" data-made={made} data-remaking={remaking}>
      Full-size corrected images: <span className="font-medium tabular-nums" data-value>{made}</span> of {counts.ready}
      {made < counts.ready ? ' (made after the analyses; reviewing does not wait for them)' : ''}
      {remaking > 0 && (
        <span data-remaking-note>
          {' '}· <span className="tabular-nums">{remaking}</span> of them being made again{why}.
        </span>
      )}
    </p>
  );
}
