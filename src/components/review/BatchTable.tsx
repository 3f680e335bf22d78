/**
 * The batch review table: every print with its thumbnail, state, fade grade, paper-base swatch,
 * dye bars and decision; sort and filter; select several for one decision (undone at once if need
 * be), to clear their decisions, to move them to another batch or to remove them.
 */
import { useMemo, useState } from 'react';
import type { ItemRow } from '../../lib/review/types.ts';
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

interface Props {
  batchId: string;
  rows: ItemRow[];
  canDecide: boolean;
  /** The archive's other batches, where prints can be moved. */
  otherBatches?: { id: string; name: string }[];
}

type BulkDecision = Exclude<Decision, 'accepted_adjusted'> | 'undecided';
const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`;

type SortKey = 'seq' | 'grade' | 'paper' | 'loss' | 'doubt' | 'decision';
const SORTS: { key: SortKey; words: string }[] = [
  { key: 'seq', words: 'Scan order' },
  { key: 'grade', words: 'Most faded first' },
  { key: 'paper', words: 'Most yellowed paper first' },
  { key: 'loss', words: 'Most dye lost first' },
  { key: 'doubt', words: 'Least certain first' },
  { key: 'decision', words: 'Not reviewed first' },
];
/** Expected CIEDE2000 from which a print is marked as one the engine is unsure of (a difference easily seen side by side; our own choice). */
const UNSURE_FROM = 5;
const DYE_COLOURS = { cyan: '#3b8ea5', magenta: '#b0487a', yellow: '#c9a227' } as const;
const gradeRank = (g: string | null) => (g ? FADE_GRADES.indexOf(g as FadeGradeName) : -1);

function hex(rgb: readonly number[]): string {
  return `#${rgb.map((v) => Math.round(Math.min(1, Math.max(0, v)) * 255).toString(16).padStart(2, '0')).join('')}`;
}

export default function BatchTable({ batchId, rows: initialRows, canDecide, otherBatches = [] }: Props) {
  const [rows, setRows] = useState(initialRows);
  const [state, setState] = useState<string>('all');
  const [grade, setGrade] = useState<string>('all');
  const [decision, setDecision] = useState<string>('all');
  const [sort, setSort] = useState<SortKey>('seq');
  const [selected, setSelected] = useState<Set<string>>(new Set());
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ kind: 'info' | 'error'; text: string; details?: string[]; undo?: string } | null>(null);
  const [pending, setPending] = useState<null | 'move' | 'remove'>(null);
  const [moveTo, setMoveTo] = useState(otherBatches[0]?.id ?? '');
  const [rescan, setRescan] = useState<{ open: boolean; negativeAvailable: NegativeAvailability; negativeLocation: string }>({ open: false, negativeAvailable: 'unknown', negativeLocation: '' });

  const shown = useMemo(() => {
    const list = rows.filter(
      (r) =>
        (state === 'all' || r.state === state) &&
        (grade === 'all' || r.fadeGrade === grade) &&
        (decision === 'all' || (decision === 'undecided' ? !r.decision : r.decision === decision)),
    );
    const by: Record<SortKey, (a: ItemRow, b: ItemRow) => number> = {
      seq: (a, b) => a.seq - b.seq,
      grade: (a, b) => gradeRank(b.fadeGrade) - gradeRank(a.fadeGrade) || a.seq - b.seq,
      paper: (a, b) => (b.paperBase?.deltaE00 ?? -1) - (a.paperBase?.deltaE00 ?? -1) || a.seq - b.seq,
      loss: (a, b) => (b.dyeLoss ?? -1) - (a.dyeLoss ?? -1) || a.seq - b.seq,
      doubt: (a, b) => (b.expectedDeltaE00 ?? -1) - (a.expectedDeltaE00 ?? -1) || a.seq - b.seq,
      decision: (a, b) => Number(!!a.decision) - Number(!!b.decision) || a.seq - b.seq,
    };
    return list.sort(by[sort]);
  }, [rows, state, grade, decision, sort]);

  // failed and waiting prints can be chosen too: to be moved or removed (a decision skips them and says why)
  const selectable = shown;
  const allShownSelected = selectable.length > 0 && selectable.every((r) => selected.has(r.id));
  const toggle = (id: string) =>
    setSelected((s) => {
      const n = new Set(s);
      if (n.has(id)) n.delete(id);
      else n.add(id);
      return n;
    });

  type Answer = { bulkId: string; decided: { id: string; lockVersion: number; decision: Decision | null }[]; conflicts: { id: string; message: string }[] };
  const seqOf = (id: string) => rows.find((r) => r.id === id)?.seq ?? id;

  function applyAnswer(res: Answer, negativeLocation: string | null) {
    const done = new Map(res.decided.map((x) => [x.id, x]));
    setRows((rs) => rs.map((r) => (done.has(r.id) ? { ...r, decision: done.get(r.id)!.decision, lockVersion: done.get(r.id)!.lockVersion, negativeLocation: done.get(r.id)!.decision === 'rescan' ? negativeLocation : null } : r)));
  }

  function failed(err: unknown, fallback: string) {
    const e = err as ApiError;
    setMessage({ kind: 'error', text: e.message ?? fallback, details: e.fields ? Object.entries(e.fields).map(([id, m]) => `Print ${seqOf(id)}: ${m}`) : [] });
  }

  async function decideSelected(d: BulkDecision) {
    const items = rows.filter((r) => selected.has(r.id)).map((r) => ({ id: r.id, lockVersion: r.lockVersion }));
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
      applyAnswer(res, d === 'rescan' ? rescan.negativeLocation.trim() || null : null);
      setSelected(new Set());
      setRescan((x) => ({ ...x, open: false }));
      const what = d === 'undecided' ? 'Back to not reviewed' : DECISION_WORDS[d];
      setMessage({
        kind: res.conflicts.length ? 'error' : 'info',
        text: `${what}: ${plural(res.decided.length, 'print')}.${res.conflicts.length ? ` ${res.conflicts.length} left as they were:` : ''}`,
        details: res.conflicts.map((c) => `Print ${seqOf(c.id)}: ${c.message}`),
        undo: res.bulkId,
      });
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
      applyAnswer(res, null);
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
    const chosen = rows.filter((r) => selected.has(r.id));
    const target = otherBatches.find((b) => b.id === moveTo);
    setBusy(true);
    setMessage(null);
    const gone: string[] = [];
    const problems: string[] = [];
    for (const r of chosen) {
      try {
        if (action === 'move') await api(`/api/items/${r.id}/move`, { body: { batchId: moveTo } });
        else await api(`/api/items/${r.id}/removal`, { body: { confirm: true } });
        gone.push(r.id);
      } catch (err) {
        problems.push(`Print ${r.seq}: ${(err as ApiError).message}`);
      }
    }
    setRows((rs) => rs.filter((r) => !gone.includes(r.id)));
    setSelected(new Set());
    setPending(null);
    setBusy(false);
    setMessage({
      kind: problems.length ? 'error' : 'info',
      text:
        action === 'move'
          ? `Moved ${plural(gone.length, 'print')} to "${target?.name ?? 'the other batch'}".`
          : `Removed ${plural(gone.length, 'print')}. They can be restored from Recently removed for 30 days.`,
      details: problems,
    });
  }

  const chosen = rows.filter((r) => selected.has(r.id));
  const chosenDecided = chosen.filter((r) => r.decision).length;
  const firstToReview = rows.find((r) => r.state === 'ready' && !r.decision);
  return (
    <section className="space-y-3" data-batch-table>
      <div className="flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="f-state" className="label">State</label>
          <select id="f-state" className="field w-auto py-1.5" value={state} onChange={(e) => setState(e.target.value)}>
            <option value="all">All</option>
            {ITEM_STATES.map((s) => <option key={s} value={s}>{STATE_WORDS[s]}</option>)}
          </select>
        </div>
        <div>
          <label htmlFor="f-grade" className="label">Fading</label>
          <select id="f-grade" className="field w-auto py-1.5" value={grade} onChange={(e) => setGrade(e.target.value)}>
            <option value="all">All</option>
            {FADE_GRADES.map((g) => <option key={g} value={g}>{GRADE_WORDS[g]}</option>)}
          </select>
        </div>
        <div>
          <label htmlFor="f-decision" className="label">Decision</label>
          <select id="f-decision" className="field w-auto py-1.5" value={decision} onChange={(e) => setDecision(e.target.value)}>
            <option value="all">All</option>
            <option value="undecided">{DECISION_WORDS.undecided}</option>
            {(['accepted', 'accepted_adjusted', 'rescan', 'skipped'] as const).map((d) => <option key={d} value={d}>{DECISION_WORDS[d]}</option>)}
          </select>
        </div>
        <div>
          <label htmlFor="f-sort" className="label">Order</label>
          <select id="f-sort" className="field w-auto py-1.5" value={sort} onChange={(e) => setSort(e.target.value as SortKey)}>
            {SORTS.map((s) => <option key={s.key} value={s.key}>{s.words}</option>)}
          </select>
        </div>
        {firstToReview && <a className="btn-primary ml-auto" href={`/items/${firstToReview.id}`} data-start-review>Review one by one</a>}
      </div>

      {canDecide && (
        <div className="flex flex-wrap items-center gap-2 rounded-md border border-paper-200 bg-paper-100 px-3 py-2 text-sm" data-bulk-bar>
          <span className="mr-2 text-ink-700" data-selected-count={selected.size}>{selected.size} selected</span>
          <button type="button" className="btn-primary py-1.5" disabled={busy || selected.size === 0} onClick={() => void decideSelected('accepted')} data-bulk="accepted">Accept selected</button>
          <button type="button" className="btn-quiet py-1.5" disabled={busy || selected.size === 0} onClick={() => setRescan((r) => ({ ...r, open: !r.open }))} aria-expanded={rescan.open}>Set aside for rescan…</button>
          <button type="button" className="btn-quiet py-1.5" disabled={busy || selected.size === 0} onClick={() => void decideSelected('skipped')} data-bulk="skipped">Leave for later</button>
          <button type="button" className="btn-quiet py-1.5" disabled={busy || selected.size === 0} onClick={() => void decideSelected('undecided')} data-bulk="undecided">Back to not reviewed</button>
          <button type="button" className="btn-quiet py-1.5" disabled={busy || selected.size === 0 || otherBatches.length === 0} onClick={() => setPending(pending === 'move' ? null : 'move')} aria-expanded={pending === 'move'} data-bulk="move">Move to another batch…</button>
          <button type="button" className="btn-quiet py-1.5 text-danger-700" disabled={busy || selected.size === 0} onClick={() => setPending(pending === 'remove' ? null : 'remove')} aria-expanded={pending === 'remove'} data-bulk="remove">Remove…</button>
          {selected.size > 0 && <button type="button" className="btn-quiet py-1.5" onClick={() => setSelected(new Set())}>Clear selection</button>}
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
                Remove {chosen.length === 1 ? `print ${chosen[0].seq}` : plural(chosen.length, 'print')} from this batch{chosenDecided ? `, with ${chosenDecided === chosen.length && chosen.length === 1 ? 'its decision' : `the decisions on ${plural(chosenDecided, 'print')}`}` : ''}, captions and corrections?
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

      <div className="overflow-x-auto rounded-lg border border-paper-200 bg-white">
        <table className="w-full text-sm">
          <caption className="sr-only">Prints of this batch</caption>
          <thead className="bg-paper-50 text-left text-xs uppercase tracking-wide text-ink-500">
            <tr>
              {canDecide && (
                <th scope="col" className="w-10 px-3 py-2">
                  <input
                    type="checkbox"
                    aria-label="Select every print shown"
                    checked={allShownSelected}
                    onChange={() => setSelected((s) => (allShownSelected ? new Set([...s].filter((id) => !selectable.some((r) => r.id === id))) : new Set([...s, ...selectable.map((r) => r.id)])))}
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
          <tbody className="divide-y divide-paper-200">
            {shown.map((r) => (
              <tr key={r.id} data-item-row={r.id} data-seq={r.seq} data-state={r.state} data-decision={r.decision ?? 'none'} className={selected.has(r.id) ? 'bg-lamp-500/5' : undefined}>
                {canDecide && (
                  <td className="px-3 py-2">
                    <input type="checkbox" aria-label={`Select print ${r.seq}`} checked={selected.has(r.id)} onChange={() => toggle(r.id)} className="accent-lamp-600" />
                  </td>
                )}
                <td className="px-3 py-2">
                  <a href={r.state === 'ready' || r.state === 'failed' ? `/items/${r.id}` : undefined} className="flex items-center gap-3 text-ink-900 hover:text-lamp-700">
                    {r.hasThumbnail ? (
                      <img src={`/api/items/${r.id}/thumbnail`} alt="" width={64} height={44} loading="lazy" className="h-11 w-16 rounded border border-paper-200 object-cover" />
                    ) : (
                      <span className="h-11 w-16 rounded border border-dashed border-paper-300" aria-hidden="true" />
                    )}
                    <span>
                      <span className="font-medium">{r.seq}</span>
                      <span className="block max-w-[14rem] truncate text-xs text-ink-500">{r.originalName}</span>
                    </span>
                  </a>
                </td>
                <td className="px-3 py-2 text-ink-700">
                  {STATE_WORDS[r.state as keyof typeof STATE_WORDS] ?? r.state}
                  {r.failureReason && <span className="block max-w-[16rem] text-xs text-danger-700" data-failure-reason>{r.failureReason}</span>}
                </td>
                <td className="px-3 py-2">
                  {r.fadeGrade ? GRADE_WORDS[r.fadeGrade as FadeGradeName] ?? r.fadeGrade : '–'}
                  {r.rescanAdvised && <span className="block text-xs text-warn-700">negative would help</span>}
                  {r.expectedDeltaE00 !== null && r.expectedDeltaE00 >= UNSURE_FROM && (
                    <span className="block text-xs text-warn-700" data-unsure title={`The engine expects its proposal to be off by about ${r.expectedDeltaE00.toFixed(1)} ΔE00 here: check this print by eye.`}>
                      engine unsure
                    </span>
                  )}
                </td>
                <td className="px-3 py-2">
                  {r.paperBase ? (
                    <span className="flex items-center gap-2">
                      <span className="inline-block h-5 w-5 rounded border border-paper-300" style={{ background: hex(r.paperBase.srgb) }} aria-hidden="true" />
                      <span className="tabular-nums" title="CIEDE2000 difference from a neutral of the same lightness">ΔE00 {r.paperBase.deltaE00.toFixed(1)}</span>
                    </span>
                  ) : '–'}
                </td>
                <td className="px-3 py-2">
                  {r.dyes ? (
                    <span className="grid w-36 gap-0.5" aria-label={`Dye left: cyan ${Math.round(r.dyes.cyan)} %, magenta ${Math.round(r.dyes.magenta)} %, yellow ${Math.round(r.dyes.yellow)} %`}>
                      {(['cyan', 'magenta', 'yellow'] as const).map((d) => (
                        <span key={d} className="flex items-center gap-1.5" title={`${d}: ${Math.round(r.dyes![d])} % left`}>
                          <span className="h-1.5 flex-1 overflow-hidden rounded-full bg-paper-100">
                            <span className="block h-full rounded-full" style={{ width: `${Math.min(100, r.dyes![d])}%`, background: DYE_COLOURS[d] }} />
                          </span>
                          <span className="w-8 text-right text-[11px] tabular-nums text-ink-500">{Math.round(r.dyes![d])}</span>
                        </span>
                      ))}
                    </span>
                  ) : '–'}
                </td>
                <td className="px-3 py-2 text-ink-700" data-decision-cell>
                  {DECISION_WORDS[r.decision ?? 'undecided']}
                  {r.decision === 'rescan' && r.negativeLocation && <span className="block text-xs text-ink-500">negative: {r.negativeLocation}</span>}
                </td>
              </tr>
            ))}
            {shown.length === 0 && (
              <tr>
                <td colSpan={canDecide ? 7 : 6} className="px-3 py-6 text-center text-ink-500">No prints match these filters.</td>
              </tr>
            )}
          </tbody>
        </table>
      </div>
    </section>
  );
}
