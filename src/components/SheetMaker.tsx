/**
 * "Make a contact sheet": which prints of the batch (all, those whose people are unknown, those
 * with no date yet, or the ones chosen on the batch page) and the paper; the new sheet's page
 * opens, with its PDF to print.
 */
import { useState, type FormEvent } from 'react';
import { api, ApiError } from './api-client.ts';
import { SHEET_PAPERS, SHEET_SCOPES, type SheetPaper, type SheetScope } from '../lib/sheets/contact-sheet.ts';

export default function SheetMaker({ batchId, chosen }: { batchId: string; chosen: string[] }) {
  const [scope, setScope] = useState<SheetScope>(chosen.length ? 'chosen' : 'all');
  const [paper, setPaper] = useState<SheetPaper>('a4');
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);

  async function make(e: FormEvent) {
    e.preventDefault();
    setBusy(true);
    setError(null);
    try {
      const sheet = await api<{ pageUrl: string }>(`/api/batches/${batchId}/sheets`, { body: { scope, paper, ...(scope === 'chosen' ? { itemIds: chosen } : {}) } });
      window.location.assign(sheet.pageUrl);
    } catch (err) {
      setError((err as ApiError).message);
      setBusy(false);
    }
  }

  return (
    <form className="card space-y-4" onSubmit={make} aria-labelledby="make-sheet" data-sheet-form>
      <h2 id="make-sheet">Make a contact sheet</h2>
      <fieldset className="space-y-1">
        <legend className="label">Which prints</legend>
        {SHEET_SCOPES.filter((s) => s.key !== 'chosen' || chosen.length > 0).map((s) => (
          <label key={s.key} className="flex items-center gap-2">
            <input type="radio" name="scope" value={s.key} checked={scope === s.key} onChange={() => setScope(s.key)} />
            {s.key === 'chosen' ? `${s.words} (${chosen.length})` : s.words}
          </label>
        ))}
      </fieldset>
      <label className="flex items-center gap-2">
        <span className="label">Paper</span>
        <select className="field w-auto py-1" value={paper} onChange={(e) => setPaper(e.target.value as SheetPaper)}>
          {Object.entries(SHEET_PAPERS).map(([key, p]) => (
            <option key={key} value={key}>{p.words}</option>
          ))}
        </select>
      </label>
      <button type="submit" className="btn-primary" disabled={busy}>{busy ? 'Making the sheet…' : 'Make the sheet'}</button>
      {error && <p className="notice-error" role="alert">{error}</p>}
    </form>
  );
}
