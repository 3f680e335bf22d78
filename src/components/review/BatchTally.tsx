/**
 * The batch page's one-line summary ("19 prints · 4 decided · 2 captioned"), kept up to date
 * from the tally the batch table sends after each bulk action, removal or move.
 */
import { useEffect, useState } from 'react';
import { TALLY_EVENT, type ReviewTally } from '../../lib/review/listing.ts';

interface Props {
  initial: ReviewTally;
  /** What comes before the counts: the batch's source. */
  lead?: string;
}

const n = (x: number) => x.toLocaleString('en-GB');
const plural = (x: number, one: string, many = `${one}s`) => `${n(x)} ${x === 1 ? one : many}`;

export default function BatchTally({ initial, lead }: Props) {
  const [tally, setTally] = useState(initial);
  useEffect(() => {
    const on = (e: Event) => setTally((e as CustomEvent<ReviewTally>).detail);
    window.addEventListener(TALLY_EVENT, on);
    return () => window.removeEventListener(TALLY_EVENT, on);
  }, []);
  return (
    <p className="mt-1 text-sm text-ink-700" data-batch-tally data-prints={tally.prints} data-decided={tally.decided} data-captioned={tally.captioned} aria-live="polite">
      {lead && `${lead} · `}
      {plural(tally.prints, 'print')} · {n(tally.decided)} decided · {n(tally.captioned)} captioned
    </p>
  );
}
