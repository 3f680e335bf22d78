import { useState } from 'react';
import { SOURCE_KIND_LABELS, SOURCE_KINDS, type BatchCreateInput } from '../lib/batches/schemas.ts';
import { api, ApiError } from './api-client.ts';

/** The new-batch form: name, physical source, rough dates, notes; then on to the upload page. */
export default function BatchForm() {
  const [form, setForm] = useState<BatchCreateInput>({ name: '', sourceKind: 'box', sourceLabel: '', dateFrom: '', dateTo: '', notes: '' });
  const [errors, setErrors] = useState<Record<string, string>>({});
  const [message, setMessage] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const set = (k: keyof BatchCreateInput) => (e: React.ChangeEvent<HTMLInputElement | HTMLSelectElement | HTMLTextAreaElement>) => setForm({ ...form, [k]: e.target.value });

  async function submit(e: React.FormEvent) {
    e.preventDefault();
    setBusy(true);
    setErrors({});
    setMessage(null);
    try {
      const batch = await api<{ id: string }>('/api/batches', { body: form });
      window.location.assign(`/batches/${batch.id}/upload`);
    } catch (err) {
      setBusy(false);
      if (err instanceof ApiError) {
        setErrors(err.fields);
        setMessage(err.message);
      } else setMessage(String(err));
    }
  }

  const fieldError = (k: string) => errors[k] && <p id={`${k}-error`} className="mt-1 text-sm text-danger-700">{errors[k]}</p>;
  return (
    <form onSubmit={submit} className="grid max-w-2xl gap-4" noValidate>
      {message && <p className="notice-error" role="alert">{message}</p>}
      <div>
        <label className="label" htmlFor="batch-name">Name</label>
        <input id="batch-name" className="field" required maxLength={200} value={form.name} onChange={set('name')} placeholder="Hall cupboard shoebox, 1978–1983" aria-invalid={Boolean(errors.name)} aria-describedby={errors.name ? 'name-error' : undefined} />
        {fieldError('name')}
      </div>
      <div className="grid gap-4 sm:grid-cols-[12rem_1fr]">
        <div>
          <label className="label" htmlFor="batch-kind">Comes from a</label>
          <select id="batch-kind" className="field" value={form.sourceKind} onChange={set('sourceKind')}>
            {SOURCE_KINDS.map((k) => <option key={k} value={k}>{SOURCE_KIND_LABELS[k]}</option>)}
          </select>
        </div>
        <div>
          <label className="label" htmlFor="batch-label">Label or where it is kept</label>
          <input id="batch-label" className="field" maxLength={200} value={form.sourceLabel} onChange={set('sourceLabel')} placeholder="Shoebox marked 'Lowmere', hall cupboard, top shelf" />
          {fieldError('sourceLabel')}
        </div>
      </div>
      <div className="grid gap-4 sm:grid-cols-2">
        <div>
          <label className="label" htmlFor="batch-from">Earliest date (optional)</label>
          <input id="batch-from" className="field" maxLength={40} value={form.dateFrom} onChange={set('dateFrom')} placeholder="1978" aria-describedby="dates-help" aria-invalid={Boolean(errors.dateFrom)} />
          {fieldError('dateFrom')}
        </div>
        <div>
          <label className="label" htmlFor="batch-to">Latest date (optional)</label>
          <input id="batch-to" className="field" maxLength={40} value={form.dateTo} onChange={set('dateTo')} placeholder="1983~" aria-describedby="dates-help" aria-invalid={Boolean(errors.dateTo)} />
          {fieldError('dateTo')}
        </div>
        <p id="dates-help" className="text-xs text-ink-500 sm:col-span-2">A year (1978), a month (1981-07), or a rough date: 1981~ for “about 1981”, 198X for “some time in the 80s”.</p>
      </div>
      <div>
        <label className="label" htmlFor="batch-notes">Notes (optional)</label>
        <textarea id="batch-notes" className="field" rows={3} maxLength={4000} value={form.notes} onChange={set('notes')} />
      </div>
      <div className="flex items-start gap-2">
        <input id="batch-rescans" type="checkbox" className="mt-1" checked={form.holdsRescans ?? false} onChange={(e) => setForm((f) => ({ ...f, holdsRescans: e.target.checked }))} aria-describedby="rescans-help" />
        <div>
          <label htmlFor="batch-rescans">These are rescans from the negatives</label>
          <p id="rescans-help" className="text-xs text-ink-500">Each scan is matched to the print set aside for a rescan that it shows, and you confirm before it replaces that print’s scan.</p>
        </div>
      </div>
      <div>
        <button className="btn-primary" type="submit" disabled={busy}>{busy ? 'Creating …' : 'Create batch and add scans'}</button>
      </div>
    </form>
  );
}
