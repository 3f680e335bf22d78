/**
 * Typing back a contact sheet: the sheet's prints in the sheet's order, each with the three
 * questions of the paper. Enter saves a print's answers and moves to the next print (Tab moves
 * between the fields as usual); each saved answer is a suggestion in the relative's name.
 */
import { useRef, useState, type KeyboardEvent } from 'react';
import { api, ApiError } from './api-client.ts';
import type { SheetPrint } from '../lib/sheets/contact-sheet.ts';

type Fields = { who: string; where: string; when: string; note: string };
type RowState = { fields: Fields; saved: boolean; error: string | null; answered: number };
const EMPTY: Fields = { who: '', where: '', when: '', note: '' };

export default function SheetAnswers({ sheetId, prints }: { sheetId: string; prints: SheetPrint[] }) {
  const [relative, setRelative] = useState('');
  const [rows, setRows] = useState<Record<string, RowState>>(() => Object.fromEntries(prints.map((p) => [p.itemId, { fields: EMPTY, saved: false, error: null, answered: p.answered }])));
  const [notice, setNotice] = useState<string | null>(null);
  const firstFields = useRef<Record<string, HTMLInputElement | null>>({});
  const relativeField = useRef<HTMLInputElement | null>(null);

  const change = (id: string, key: keyof Fields, value: string) => setRows((r) => ({ ...r, [id]: { ...r[id], fields: { ...r[id].fields, [key]: value }, saved: false } }));

  function moveOn(index: number) {
    const next = prints[index + 1];
    if (next) firstFields.current[next.itemId]?.focus();
  }

  async function save(index: number) {
    const p = prints[index];
    const row = rows[p.itemId];
    const f = row.fields;
    if (!f.who.trim() && !f.where.trim() && !f.when.trim() && !f.note.trim()) return moveOn(index);
    if (!relative.trim()) {
      setNotice('Write first whose answers these are: the name of the relative who filled in the sheet.');
      relativeField.current?.focus();
      return;
    }
    setNotice(null);
    try {
      const body = { itemId: p.itemId, relative, ...(f.who.trim() ? { who: f.who } : {}), ...(f.where.trim() ? { where: f.where } : {}), ...(f.when.trim() ? { when: f.when } : {}), ...(f.note.trim() ? { note: f.note } : {}) };
      const saved = await api<{ created: boolean }>(`/api/sheets/${sheetId}/answers`, { body });
      setRows((r) => ({ ...r, [p.itemId]: { ...r[p.itemId], saved: true, error: null, answered: r[p.itemId].answered + (saved.created ? 1 : 0) } }));
      moveOn(index);
    } catch (err) {
      const e = err as ApiError;
      const fields = Object.values(e.fields ?? {});
      setRows((r) => ({ ...r, [p.itemId]: { ...r[p.itemId], saved: false, error: fields.length ? fields.join(' ') : e.message } }));
    }
  }

  const onKey = (index: number) => (e: KeyboardEvent<HTMLInputElement>) => {
    if (e.key === 'Enter') {
      e.preventDefault();
      void save(index);
    }
  };

  return (
    <div className="space-y-4">
      <div className="card max-w-xl">
        <label className="label" htmlFor="relative">Whose answers are these?</label>
        <input id="relative" ref={relativeField} className="field" value={relative} onChange={(e) => setRelative(e.target.value)} placeholder="The name written on the cover, e.g. Aunt Nora" autoComplete="off" data-relative />
        <p className="mt-1 text-xs text-ink-500">They need no account: their answers are kept in this name, and you accept or decline each.</p>
      </div>
      {notice && <p className="notice-error" role="alert">{notice}</p>}
      <ol className="space-y-3" aria-label="Prints of the sheet">
        {prints.map((p, index) => {
          const row = rows[p.itemId];
          const label = `No. ${p.seq}`;
          return (
            <li key={p.itemId} className="card flex flex-wrap gap-4" data-sheet-print={p.seq}>
              <div className="w-40 shrink-0">
                {p.thumbnailUrl ? <img src={p.thumbnailUrl} alt={`Print ${p.seq}`} className="max-h-32 w-full rounded object-contain" /> : <div className="flex h-24 items-center justify-center rounded bg-paper-100 text-xs text-ink-500">No picture yet</div>}
              </div>
              <div className="min-w-0 flex-1 space-y-2">
                <p>
                  <strong className="text-lg">{label}</strong>
                  {p.caption && <span className="ml-2 text-ink-700">{p.caption}</span>}
                  {p.dateWords && <span className="ml-2 text-ink-500">{p.dateWords}</span>}
                </p>
                <div className="grid gap-2 sm:grid-cols-3">
                  <label className="text-sm">
                    <span className="label">Who is this?</span>
                    <input className="field" ref={(el) => { firstFields.current[p.itemId] = el; }} value={row.fields.who} onChange={(e) => change(p.itemId, 'who', e.target.value)} onKeyDown={onKey(index)} aria-label={`${label}: who is this? (names separated by commas)`} data-field="who" />
                  </label>
                  <label className="text-sm">
                    <span className="label">Where?</span>
                    <input className="field" value={row.fields.where} onChange={(e) => change(p.itemId, 'where', e.target.value)} onKeyDown={onKey(index)} aria-label={`${label}: where?`} data-field="where" />
                  </label>
                  <label className="text-sm">
                    <span className="label">When?</span>
                    <input className="field" value={row.fields.when} onChange={(e) => change(p.itemId, 'when', e.target.value)} onKeyDown={onKey(index)} aria-label={`${label}: when?`} placeholder="summer 1981" data-field="when" />
                  </label>
                </div>
                <label className="block text-sm">
                  <span className="label">Anything else written beside it</span>
                  <input className="field" value={row.fields.note} onChange={(e) => change(p.itemId, 'note', e.target.value)} onKeyDown={onKey(index)} aria-label={`${label}: anything else written beside it`} data-field="note" />
                </label>
                <p className="text-xs" aria-live="polite" data-row-status>
                  {row.error ? <span className="text-danger-700">{row.error}</span> : row.saved ? <span className="text-ink-700">Saved as a suggestion.</span> : row.answered > 0 ? <span className="text-ink-500">{row.answered === 1 ? 'One answer' : `${row.answered} answers`} typed in already.</span> : null}
                </p>
              </div>
            </li>
          );
        })}
      </ol>
    </div>
  );
}
