/**
 * The batch review table, a page at a time: search over captions, people, places and the back of
 * the print; filters (state, fading, decision, what is still missing) and an order, all worked out
 * on the server (GET /api/batches/<id>/items?view=rows), so a batch of 1,000 prints sends one page
 * of rows. Every print with its thumbnail, state, fade grade, paper-base swatch, dye bars and
 * decision. Select prints on several pages, or every print that matches, for one decision (undone
 * at once if need be), to clear their decisions, to move them to another batch or to remove them;
 * after each, the page and the batch's counts are read again.
 */
import { useEffect, useRef, useState } from 'react';
import { watchBatch } from '../live-batch.ts';
import type { ItemRow } from '../../lib/review/types.ts';
import { LIST_SORTS, listQueryToParams, MISSING, TALLY_EVENT, type ListPage, type ListQuery, type ListSort, type Missing, type ReviewTally } from '../../lib/review/listing.ts';
import {
  DECISION_WORDS,
  FADE_GRADES,
  GRADE_WORDS,
  ITEM_STATES,
  NEGATIVE_AVAILABILITY,
  NEGATIVE_PLACES,
  NEGATIVE_WORDS,
  STATE_WORDS,
  type Decision,
  type FadeGradeName,
  type NegativeAvailability,
} from '../../lib/review/words.ts';
import { api, ApiError } from '../api-client.ts';

type RowsPage = ListPage<ItemRow> & { tally: ReviewTally; firstToReview: string | null };

interface Props {
  batchId: string;
  /** The page the server rendered, for `query`. */
  initial: RowsPage;
  query: ListQuery;
  canDecide: boolean;
  /** The archive's other batches, where prints can be moved. */
  otherBatches?: { id: string; name: string }[];
}

type BulkDecision = Exclude<Decision, 'accepted_adjusted'> | 'undecided';
type Filters = Pick<ListQuery, 'q' | 'state' | 'grade' | 'decision' | 'missing' | 'sort' | 'page' | 'per'>;
const plural = (n: number, one: string, many = `${one}s`) => `${n.toLocaleString('en-GB')} ${n === 1 ? one : many}`;

/** Expected CIEDE2000 from which a print is marked as one the engine is unsure of (a difference easily seen side by side; our own choice). */
const UNSURE_FROM = 5;
/** How long typing may pause before the search is sent. */
const SEARCH_PAUSE_MS = 250;
const DYE_COLOURS = { cyan: '#3b8ea5', magenta: '#b0487a', yellow: '#c9a227' } as const;
/** A print's row: a card of wrapped cells on a phone, a table row from sm up. */
const CARD_ROW = 'flex flex-wrap gap-x-4 gap-y-2 px-3 pb-3 sm:table-row sm:p-0';
/** A cell after the first: two to a line on a phone, each under its header's word; a table cell from sm up. */
const CARD_CELL =
  'basis-[calc(50%-0.5rem)] before:block before:text-[11px] before:uppercase before:tracking-wide before:text-ink-500 before:content-[attr(data-label)] sm:table-cell sm:px-3 sm:py-2 sm:before:content-none';

function hex(rgb: readonly number[]): string {
  return `#${rgb.map((v) => Math.round(Math.min(1, Math.max(0, v)) * 255).toString(16).padStart(2, '0')).join('')}`;
}

export default function BatchTable({ batchId, initial, query, canDecide, otherBatches = [] }: Props) {
  const [data, setData] = useState<RowsPage>(initial);
  const [filters, setFilters] = useState<Filters>({ q: query.q ?? '', state: query.state, grade: query.grade, decision: query.decision, missing: query.missing ?? [], sort: query.sort ?? 'seq', page: query.page ?? 1, per: query.per });
  const [searchText, setSearchText] = useState(query.q ?? '');
  const [loading, setLoading] = useState(false);
  /** Chosen prints, kept across pages: id to the lockVersion and number they had when chosen. */
  const [selected, setSelected] = useState<Map<string, { lockVersion: number; seq: number }>>(new Map());
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string; details?: string[]; undo?: string } | null>(null);
  const [pending, setPending] = useState<null | 'move' | 'remove'>(null);
  const [moveTo, setMoveTo] = useState(otherBatches[0]?.id ?? '');
  const [rescan, setRescan] = useState<{ open: boolean; negativeAvailable: NegativeAvailability; negativeLocation: string }>({ open: false, negativeAvailable: 'unknown', negativeLocation: '' });
  const asked = useRef(0);
  const first = useRef(true);
  const rows = data.items;

  /** Reads the page for `f` from the server; an older answer arriving late is dropped. */
  async function load(f: Filters): Promise<void> {
    const ticket = ++asked.current;
    setLoading(true);
    try {
      const params = listQueryToParams({ ...f, view: 'rows' });
      const next = await api<RowsPage>(`/api/batches/${batchId}/items?${params}`);
      if (ticket !== asked.current) return;
      // past the last page (prints left the filter): the last page there is
      if (next.items.length === 0 && next.page > 1 && next.total > 0) {
        setFilters((x) => ({ ...x, page: next.pages }));
        return;
      }
      setData(next);
      window.dispatchEvent(new CustomEvent<ReviewTally>(TALLY_EVENT, { detail: next.tally }));
      const own = listQueryToParams(f).toString();
      window.history.replaceState(null, '', `${window.location.pathname}${own ? `?${own}` : ''}`);
    } catch (err) {
      if (ticket === asked.current) setMessage({ kind: 'error', text: (err as ApiError).message ?? 'The prints could not be loaded.' });
    } finally {
      if (ticket === asked.current) setLoading(false);
    }
  }

  useEffect(() => {
    if (first.current) {
      first.current = false;
      return;
    }
    void load(filters);
  }, [filters]);

  // the search goes out once typing pauses
  useEffect(() => {
    if ((filters.q ?? '') === searchText.trim()) return;
    const t = setTimeout(() => setFilters((x) => ({ ...x, q: searchText.trim(), page: 1 })), SEARCH_PAUSE_MS);
    return () => clearTimeout(t);
  }, [searchText]);

  // A print of this page whose processing moves on (analysed, failed) is shown as it is now: the
  // batch's pushed events (live-batch.ts) name it, and the page is read again.
  const shown = useRef({ rows, filters, load });
  shown.current = { rows, filters, load };
  useEffect(
    () =>
      watchBatch(batchId, {
        items: (items) => {
          const now = shown.current;
          if (items.some((i) => now.rows.some((r) => r.id === i.id && r.state !== i.state))) void now.load(now.filters);
        },
      }),
    [batchId],
  );

  const refine = (change: Partial<Filters>) => setFilters((x) => ({ ...x, ...change, page: change.page ?? 1 }));
  const toggleMissing = (m: Missing) => refine({ missing: filters.missing.includes(m) ? filters.missing.filter((x) => x !== m) : [...filters.missing, m] });
  const reload = () => load(filters);

  const allShownSelected = rows.length > 0 && rows.every((r) => selected.has(r.id));
  const toggle = (r: ItemRow) =>
    setSelected((s) => {
      const n = new Map(s);
      if (n.has(r.id)) n.delete(r.id);
      else n.set(r.id, { lockVersion: r.lockVersion, seq: r.seq });
      return n;
    });
  const toggleShown = () =>
    setSelected((s) => {
      const n = new Map(s);
      if (allShownSelected) for (const r of rows) n.delete(r.id);
      else for (const r of rows) n.set(r.id, { lockVersion: r.lockVersion, seq: r.seq });
      return n;
    });

  async function selectAllMatching() {
    setBusy(true);
    try {
      const res = await api<{ items: { id: string; seq: number; lockVersion: number }[] }>(`/api/batches/${batchId}/items?${listQueryToParams({ ...filters, page: undefined, view: 'ids' })}`);
      setSelected((s) => {
        const n = new Map(s);
        for (const r of res.items) n.set(r.id, { lockVersion: r.lockVersion, seq: r.seq });
        return n;
      });
    } catch (err) {
      failed(err, 'The prints could not be chosen.');
    } finally {
      setBusy(false);
    }
  }

  type Answer = { bulkId: string; decided: { id: string; lockVersion: number; decision: Decision | null }[]; conflicts: { id: string; message: string }[] };
  const seqOf = (id: string) => selected.get(id)?.seq ?? rows.find((r) => r.id === id)?.seq ?? id;

  function failed(err: unknown, fallback: string) {
    const e = err as ApiError;
    setMessage({ kind: 'error', text: e.message ?? fallback, details: e.fields ? Object.entries(e.fields).map(([id, m]) => `Print ${seqOf(id)}: ${m}`) : [] });
  }

  async function decideSelected(d: BulkDecision) {
    const items = [...selected].map(([id, v]) => ({ id, lockVersion: v.lockVersion }));
    if (items.length === 0) return;
    setBusy(true);
    setMessage(null);
    const body: Record<string, unknown> = { decision: d, items };
    if (d === 'rescan') {
      body.negativeAvailable = rescan.negativeAvailable;
      if (rescan.negativeLocation.trim()) body.negativeLocation = rescan.negativeLocation.trim();
    }
    try {
      const res = await api<Answer>(`/api/batches/${batchId}/decisions`, { body });
      setRescan((x) => ({ ...x, open: false }));
      const what = d === 'undecided' ? 'Back to not reviewed' : DECISION_WORDS[d];
      const said = {
        kind: res.conflicts.length ? ('error' as const) : ('info' as const),
        text: `${what}: ${plural(res.decided.length, 'print')}.${res.conflicts.length ? ` ${res.conflicts.length} left as they were:` : ''}`,
        details: res.conflicts.map((c) => `Print ${seqOf(c.id)}: ${c.message}`),
        undo: res.bulkId,
      };
      setSelected(new Map());
      // the rows and counts first, then the message: what it says is on the page when it shows
      await reload();
      setMessage(said);
    } catch (err) {
      failed(err, 'The decision could not be saved.');
    } finally {
      setBusy(false);
    }
  }

  async function undo(bulkId: string) {
    setBusy(true);
    try {
      const res = await api<Answer>(`/api/batches/${batchId}/decisions/undo`, { body: { bulkId } });
      await reload();
      setMessage({
        kind: res.conflicts.length ? 'error' : 'info',
        text: `Undone: ${plural(res.decided.length, 'print')} back to their decisions before.${res.conflicts.length ? ` ${res.conflicts.length} changed since and kept as they are:` : ''}`,
        details: res.conflicts.map((c) => `Print ${seqOf(c.id)}: ${c.message}`),
      });
    } catch (err) {
      failed(err, 'The undo could not be saved.');
    } finally {
      setBusy(false);
    }
  }

  /** Moves or removes the chosen prints one by one; each print's answer is reported. */
  async function eachSelected(action: 'move' | 'remove') {
    const chosenNow = [...selected];
    const target = otherBatches.find((b) => b.id === moveTo);
    setBusy(true);
    setMessage(null);
    let gone = 0;
    const problems: string[] = [];
    for (const [id, { seq }] of chosenNow) {
      try {
        if (action === 'move') await api(`/api/items/${id}/move`, { body: { batchId: moveTo } });
        else await api(`/api/items/${id}/removal`, { body: { confirm: true } });
        gone++;
      } catch (err) {
        problems.push(`Print ${seq}: ${(err as ApiError).message}`);
      }
    }
    setSelected(new Map());
    setPending(null);
    await reload();
    setMessage({
      kind: problems.length ? 'error' : 'info',
      text:
        action === 'move'
          ? `Moved ${plural(gone, 'print')} to "${target?.name ?? 'the other batch'}".`
          : `Removed ${plural(gone, 'print')}. They can be restored from Recently removed for 30 days.`,
      details: problems,
    });
    setBusy(false);
  }

  const chosen = [...selected.values()];
  const firstShown = data.total === 0 ? 0 : (data.page - 1) * data.per + 1;
  const lastShown = Math.min(data.total, data.page * data.per);
  const filtered = Boolean(filters.q || filters.state || filters.grade || filters.decision || filters.missing.length);
  return (
    <section className="space-y-3" data-batch-table>
      <form className="flex flex-wrap items-end gap-3" role="search" aria-label="Find prints in this batch" onSubmit={(e) => {
        e.preventDefault();
        refine({ q: searchText.trim() });
      }}>
        <div className="min-w-[16rem] flex-1">
          <label htmlFor="f-search" className="label">Search captions, people, places, the back of the print</label>
          <input id="f-search" type="search" className="field py-1.5" value={searchText} maxLength={200} placeholder="e.g. Lough Arrow, Máire, 1981" onChange={(e) => setSearchText(e.target.value)} data-search />
        </div>
        <div>
          <label htmlFor="f-state" className="label">State</label>
          <select id="f-state" className="field w-auto py-1.5" value={filters.state ?? 'all'} onChange={(e) => refine({ state: e.target.value === 'all' ? undefined : (e.target.value as Filters['state']) })}>
            <option value="all">All</option>
            {ITEM_STATES.map((s) => <option key={s} value={s}>{STATE_WORDS[s]}</option>)}
          </select>
        </div>
        <div>
          <label htmlFor="f-grade" className="label">Fading</label>
          <select id="f-grade" className="field w-auto py-1.5" value={filters.grade ?? 'all'} onChange={(e) => refine({ grade: e.target.value === 'all' ? undefined : (e.target.value as FadeGradeName) })}>
            <option value="all">All</option>
            {FADE_GRADES.map((g) => <option key={g} value={g}>{GRADE_WORDS[g]}</option>)}
          </select>
        </div>
        <div>
          <label htmlFor="f-decision" className="label">Decision</label>
          <select id="f-decision" className="field w-auto py-1.5" value={filters.decision ?? 'all'} onChange={(e) => refine({ decision: e.target.value === 'all' ? undefined : (e.target.value as Filters['decision']) })}>
            <option value="all">All</option>
            <option value="undecided">{DECISION_WORDS.undecided}</option>
            {(['accepted', 'accepted_adjusted', 'rescan', 'skipped'] as const).map((d) => <option key={d} value={d}>{DECISION_WORDS[d]}</option>)}
          </select>
        </div>
        <div>
          <label htmlFor="f-sort" className="label">Order</label>
          <select id="f-sort" className="field w-auto py-1.5" value={filters.sort} onChange={(e) => refine({ sort: e.target.value as ListSort })}>
            {LIST_SORTS.map((s) => <option key={s.key} value={s.key}>{s.words}</option>)}
          </select>
        </div>
        <fieldset className="flex flex-wrap items-center gap-x-3 gap-y-1 pb-1.5 text-sm">
          <legend className="label">Still to find out</legend>
          {MISSING.map((m) => (
            <label key={m.key} className="inline-flex items-center gap-1.5">
              <input type="checkbox" className="accent-lamp-600" checked={filters.missing.includes(m.key)} onChange={() => toggleMissing(m.key)} data-missing={m.key} />
              {m.words}
            </label>
          ))}
        </fieldset>
        {data.firstToReview && <a className="btn-primary ml-auto" href={`/items/${data.firstToReview}`} data-start-review>Review one by one</a>}
      </form>

      {canDecide && (
        <div className="flex flex-wrap items-center gap-2 rounded-md border border-paper-200 bg-paper-100 px-3 py-2 text-sm" data-bulk-bar>
          <span className="mr-2 text-ink-700" data-selected-count={selected.size}>{selected.size} selected</span>
          <button type="button" className="btn-primary py-1.5" disabled={busy || selected.size === 0} onClick={() => void decideSelected('accepted')} data-bulk="accepted">Accept selected</button>
          <button type="button" className="btn-quiet py-1.5" disabled={busy || selected.size === 0} onClick={() => setRescan((r) => ({ ...r, open: !r.open }))} aria-expanded={rescan.open}>Set aside for rescan…</button>
          <button type="button" className="btn-quiet py-1.5" disabled={busy || selected.size === 0} onClick={() => void decideSelected('skipped')} data-bulk="skipped">Leave for later</button>
          <button type="button" className="btn-quiet py-1.5" disabled={busy || selected.size === 0} onClick={() => void decideSelected('undecided')} data-bulk="undecided">Back to not reviewed</button>
          <button type="button" className="btn-quiet py-1.5" disabled={busy || selected.size === 0 || otherBatches.length === 0} onClick={() => setPending(pending === 'move' ? null : 'move')} aria-expanded={pending === 'move'} data-bulk="move">Move to another batch…</button>
          <button type="button" className="btn-quiet py-1.5 text-danger-700" disabled={busy || selected.size === 0} onClick={() => setPending(pending === 'remove' ? null : 'remove')} aria-expanded={pending === 'remove'} data-bulk="remove">Remove…</button>
          {/* the chosen prints travel in the address, which a server reads up to 16 KB: a few hundred ids */}
          {selected.size > 0 && selected.size <= 300 && <a className="btn-quiet py-1.5" href={`/batches/${batchId}/sheets?items=${[...selected.keys()].join(',')}`} data-bulk="sheet">Contact sheet of these…</a>}
          {selected.size > 0 && <button type="button" className="btn-quiet py-1.5" onClick={() => setSelected(new Map())}>Clear selection</button>}
          {data.total > rows.length && (
            <button type="button" className="btn-quiet py-1.5" disabled={busy} onClick={() => void selectAllMatching()} data-select-matching>
              Select all {plural(data.total, filtered ? 'print that matches' : 'print', filtered ? 'prints that match' : 'prints')}
            </button>
          )}
          {pending === 'move' && selected.size > 0 && (
            <div className="flex w-full flex-wrap items-end gap-3 pt-2" data-move-panel>
              <div>
                <label htmlFor="move-to" className="label">Move {plural(selected.size, 'print')} to</label>
                <select id="move-to" className="field w-auto py-1.5" value={moveTo} onChange={(e) => setMoveTo(e.target.value)}>
                  {otherBatches.map((b) => <option key={b.id} value={b.id}>{b.name}</option>)}
                </select>
              </div>
              <p className="text-xs text-ink-500">They take the next numbers there, with their decisions, corrections and captions.</p>
              <button type="button" className="btn-primary py-1.5" disabled={busy || !moveTo} onClick={() => void eachSelected('move')} data-confirm-move>Move</button>
            </div>
          )}
          {pending === 'remove' && selected.size > 0 && (
            <div className="w-full space-y-2 pt-2" role="alertdialog" aria-labelledby="remove-what" data-remove-panel>
              <p id="remove-what" className="text-ink-900">
                Remove {chosen.length === 1 ? `print ${chosen[0].seq}` : plural(chosen.length, 'print')} from this batch, with {chosen.length === 1 ? 'its decision' : 'their decisions'}, captions and corrections?
              </p>
              <p className="text-xs text-ink-500">They leave every list, the rescan list and exports at once. Recently removed keeps them, original scans included, for 30 days; after that they are deleted for good.</p>
              <div className="flex gap-2">
                <button type="button" className="btn-primary bg-danger-700 py-1.5" disabled={busy} onClick={() => void eachSelected('remove')} data-confirm-remove>Remove {plural(chosen.length, 'print')}</button>
                <button type="button" className="btn-quiet py-1.5" onClick={() => setPending(null)}>Keep them</button>
              </div>
            </div>
          )}
          {rescan.open && selected.size > 0 && (
            <div className="flex w-full flex-wrap items-end gap-3 pt-2">
              <fieldset>
                <legend className="label">Is the negative there?</legend>
                <div className="flex gap-3">
                  {NEGATIVE_AVAILABILITY.map((v) => (
                    <label key={v} className="inline-flex items-center gap-1">
                      <input type="radio" name="bulk-negative" checked={rescan.negativeAvailable === v} onChange={() => setRescan((r) => ({ ...r, negativeAvailable: v }))} className="accent-lamp-600" />
                      {NEGATIVE_WORDS[v]}
                    </label>
                  ))}
                </div>
              </fieldset>
              <div>
                <label htmlFor="bulk-location" className="label">Where it is kept</label>
                <input id="bulk-location" className="field py-1.5" list="bulk-places" maxLength={300} value={rescan.negativeLocation} onChange={(e) => setRescan((r) => ({ ...r, negativeLocation: e.target.value }))} />
                <datalist id="bulk-places">{NEGATIVE_PLACES.map((p) => <option key={p} value={p} />)}</datalist>
              </div>
              <button type="button" className="btn-primary py-1.5" disabled={busy} onClick={() => void decideSelected('rescan')} data-bulk="rescan">Set aside {selected.size}</button>
            </div>
          )}
        </div>
      )}

      <div aria-live="polite">
        {message && (
          <div className={message.kind === 'info' ? 'notice' : 'notice-caution'} data-bulk-message>
            {message.text}
            {message.undo && canDecide && (
              <button type="button" className="btn-quiet ml-3 py-0.5" disabled={busy} onClick={() => void undo(message.undo!)} data-undo-bulk>Undo</button>
            )}
            {message.details && message.details.length > 0 && <ul className="mt-1 list-disc pl-5">{message.details.map((d) => <li key={d}>{d}</li>)}</ul>}
          </div>
        )}
      </div>

      <Pager data={data} loading={loading} onPage={(page) => refine({ page })} first={firstShown} last={lastShown} filtered={filtered} where="top" />

      {/* On a phone each print is a card of its own (the header's words beside each value), so the
          list reads down the screen with no box to scroll sideways; from sm up it is a table. */}
      <div className={`rounded-lg border border-paper-200 bg-white sm:overflow-x-auto ${loading ? 'opacity-60' : ''}`} aria-busy={loading}>
        <table className="block w-full text-sm sm:table">
          <caption className="sr-only">Prints of this batch</caption>
          <thead className="hidden bg-paper-50 text-left text-xs uppercase tracking-wide text-ink-500 sm:table-header-group">
            <tr>
              {canDecide && (
                <th scope="col" className="w-10 px-3 py-2">
                  <input
                    type="checkbox"
                    aria-label="Select every print on this page"
                    checked={allShownSelected}
                    onChange={toggleShown}
                    className="accent-lamp-600"
                    data-select-shown
                  />
                </th>
              )}
              <th scope="col" className="px-3 py-2">Print</th>
              <th scope="col" className="px-3 py-2">State</th>
              <th scope="col" className="px-3 py-2">Fading</th>
              <th scope="col" className="px-3 py-2">Paper base</th>
              <th scope="col" className="px-3 py-2">Dye left</th>
              <th scope="col" className="px-3 py-2">Decision</th>
            </tr>
          </thead>
          <tbody className="block divide-y divide-paper-200 sm:table-row-group">
            {rows.map((r) => (
              <tr key={r.id} data-item-row={r.id} data-seq={r.seq} data-state={r.state} data-decision={r.decision ?? 'none'} className={`${CARD_ROW} ${selected.has(r.id) ? 'bg-lamp-500/5' : ''}`}>
                {canDecide && (
                  <td className="flex items-center pt-3 sm:table-cell sm:px-3 sm:py-2">
                    <input type="checkbox" aria-label={`Select print ${r.seq}`} checked={selected.has(r.id)} onChange={() => toggle(r)} className="accent-lamp-600" />
                  </td>
                )}
                <td className="min-w-0 flex-1 basis-[calc(100%-2.5rem)] pt-3 sm:table-cell sm:px-3 sm:py-2">
                  <a href={r.state === 'ready' || r.state === 'failed' ? `/items/${r.id}` : undefined} className="flex items-center gap-3 text-ink-900 hover:text-lamp-700">
                    {r.hasThumbnail ? (
                      <img src={r.thumbnail ?? `/api/items/${r.id}/thumbnail`} alt="" width={64} height={44} loading="lazy" decoding="async" className="h-11 w-16 rounded border border-paper-200 object-cover" />
                    ) : (
                      <span className="h-11 w-16 rounded border border-dashed border-paper-300" aria-hidden="true" />
                    )}
                    <span className="min-w-0">
                      <span className="font-medium">{r.seq}</span>
                      <span className="block max-w-[14rem] truncate text-xs text-ink-500">{r.originalName}</span>
                      {r.caption && <span className="block max-w-[18rem] truncate text-xs text-ink-700" data-caption>{r.caption}</span>}
                    </span>
                  </a>
                </td>
                <td className={`${CARD_CELL} text-ink-700`} data-label="State">
                  {STATE_WORDS[r.state as keyof typeof STATE_WORDS] ?? r.state}
                  {r.failureReason && <span className="block max-w-[16rem] text-xs text-danger-700" data-failure-reason>{r.failureReason}</span>}
                </td>
                <td className={CARD_CELL} data-label="Fading">
                  {r.fadeGrade ? GRADE_WORDS[r.fadeGrade as FadeGradeName] ?? r.fadeGrade : '–'}
                  {r.rescanAdvised && <span className="block text-xs text-warn-700">negative would help</span>}
                  {r.expectedDeltaE00 !== null && r.expectedDeltaE00 >= UNSURE_FROM && (
                    <span className="block text-xs text-warn-700" data-unsure title={`The engine expects its proposal to be off by about ${r.expectedDeltaE00.toFixed(1)} ΔE00 here: check this print by eye.`}>
                      engine unsure
                    </span>
                  )}
                </td>
                <td className={CARD_CELL} data-label="Paper base">
                  {r.paperBase ? (
                    <span className="flex items-center gap-2">
                      <span className="inline-block h-5 w-5 rounded border border-paper-300" style={{ background: hex(r.paperBase.srgb) }} aria-hidden="true" />
                      <span className="tabular-nums" title="CIEDE2000 difference from a neutral of the same lightness">ΔE00 {r.paperBase.deltaE00.toFixed(1)}</span>
                    </span>
                  ) : '–'}
                </td>
                <td className={CARD_CELL} data-label="Dye left">
                  {r.dyes ? (
                    // two elements per dye (a bar drawn as a gradient and its figure): a page of rows stays small
                    <span className="grid w-36 grid-cols-[1fr_2rem] items-center gap-x-1.5 gap-y-0.5" role="img" aria-label={`Dye left: cyan ${Math.round(r.dyes.cyan)} %, magenta ${Math.round(r.dyes.magenta)} %, yellow ${Math.round(r.dyes.yellow)} %`}>
                      {(['cyan', 'magenta', 'yellow'] as const).map((d) => {
                        const left = Math.max(0, Math.min(100, r.dyes![d]));
                        return [
                          <span key={`${d}-bar`} className="h-1.5 rounded-full" style={{ background: `linear-gradient(to right, ${DYE_COLOURS[d]} ${left}%, #f4eee2 ${left}%)` }} />,
                          <span key={`${d}-n`} className="text-right text-[11px] tabular-nums text-ink-500">{Math.round(r.dyes![d])}</span>,
                        ];
                      })}
                    </span>
                  ) : '–'}
                </td>
                <td className={`${CARD_CELL} text-ink-700`} data-label="Decision" data-decision-cell>
                  {DECISION_WORDS[r.decision ?? 'undecided']}
                  {r.decision === 'rescan' && r.negativeLocation && <span className="block text-xs text-ink-500">negative: {r.negativeLocation}</span>}
                </td>
              </tr>
            ))}
            {rows.length === 0 && (
              <tr className="block sm:table-row">
                <td colSpan={canDecide ? 7 : 6} className="block px-3 py-6 text-center text-ink-500 sm:table-cell" data-no-match>
                  {filtered ? 'No prints match this search and these filters.' : 'No prints in this batch yet.'}
                </td>
              </tr>
            )}
          </tbody>
        </table>
      </div>

      {data.pages > 1 && <Pager data={data} loading={loading} onPage={(page) => refine({ page })} first={firstShown} last={lastShown} filtered={filtered} where="bottom" />}
    </section>
  );
}

/** Where in the listing this page is, and the way to the others. */
function Pager({ data, loading, onPage, first, last, filtered, where }: { data: RowsPage; loading: boolean; onPage: (page: number) => void; first: number; last: number; filtered: boolean; where: 'top' | 'bottom' }) {
  const n = (x: number) => x.toLocaleString('en-GB');
  const said = data.total === 0 ? (filtered ? 'No prints match.' : 'No prints.') : `Prints ${n(first)}–${n(last)} of ${n(data.total)}${filtered ? ' that match' : ''}`;
  return (
    <nav className="flex flex-wrap items-center gap-2 text-sm text-ink-700" aria-label={where === 'top' ? 'Pages of prints' : 'Pages of prints, again'} data-pager={where}>
      <span className="mr-2" aria-live={where === 'top' ? 'polite' : undefined} data-range>{said}</span>
      {data.pages > 1 && (
        <>
          <button type="button" className="btn-quiet py-1" disabled={loading || data.page <= 1} onClick={() => onPage(data.page - 1)} data-page-previous>
            ← Previous
          </button>
          <label className="inline-flex items-center gap-1.5">
            <span>Page</span>
            <select className="field w-auto py-1" value={data.page} onChange={(e) => onPage(Number(e.target.value))} aria-label={`Page, of ${data.pages}`}>
              {Array.from({ length: data.pages }, (_, i) => <option key={i + 1} value={i + 1}>{i + 1}</option>)}
            </select>
            <span>of {data.pages}</span>
          </label>
          <button type="button" className="btn-quiet py-1" disabled={loading || data.page >= data.pages} onClick={() => onPage(data.page + 1)} data-page-next>
            Next →
          </button>
        </>
      )}
    </nav>
  );
}
