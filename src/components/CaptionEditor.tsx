import { useEffect, useMemo, useRef, useState } from 'react';
import { dateForField, describePrintDate } from '../lib/archive/edtf.ts';
import { sourceInWords } from '../lib/archive/source.ts';
import { metadataSchema, suggestionSchema, type ItemMetadata, type SuggestionView } from '../lib/archive/metadata.ts';
import { api, ApiError } from './api-client.ts';

interface Props {
  batchId: string;
  items: ItemMetadata[];
  /** Editors edit and decide suggestions; viewers suggest. */
  canEdit: boolean;
  pending: Record<string, SuggestionView[]>;
  /** The id of the print to open at; the first when absent or unknown. */
  startAt?: string;
}

interface Draft {
  caption: string;
  dateEdtf: string;
  place: string;
  people: string[];
  envelope: string;
  backText: string;
  note: string;
}

const emptyDraft = (m?: ItemMetadata): Draft => ({
  caption: m?.caption ?? '',
  dateEdtf: dateForField(m?.dateEdtf),
  place: m?.place ?? '',
  people: m?.people ?? [],
  envelope: m?.envelope ?? '',
  backText: m?.backText ?? '',
  note: '',
});

function fieldsOf(result: { success: boolean; error?: { issues: { path: (string | number)[]; message: string }[] } }): Record<string, string> {
  const out: Record<string, string> = {};
  if (!result.success) for (const i of result.error!.issues) out[String(i.path[0] ?? '_')] ??= i.message;
  return out;
}

/** The date as one types it, in words, or what is wrong with it. */
function DateHint({ value, id }: { value: string; id: string }) {
  if (!value.trim()) return <p id={id} className="mt-1 text-xs text-ink-500">As you would say it (summer 1981, early 80s, about 1975, between 1978 and 1982) or in EDTF (1981-22, 198X, 1975~).</p>;
  const r = describePrintDate(value);
  return r.ok ? (
    <p id={id} className="mt-1 text-sm text-lamp-700" data-date-words>
      {r.date.words} <span className="text-xs text-ink-500">· stored as EDTF <code data-date-edtf>{r.date.edtf}</code></span>
    </p>
  ) : (
    <p id={id} className="mt-1 text-sm text-danger-700" data-date-error>{r.message}</p>
  );
}

/** A tag field for people: type a name, Enter or comma adds it; names already in the archive are offered. */
function PeopleField({ id, value, onChange, label }: { id: string; value: string[]; onChange: (v: string[]) => void; label: string }) {
  const [text, setText] = useState('');
  const [options, setOptions] = useState<string[]>([]);
  useEffect(() => {
    const t = setTimeout(() => {
      api<{ people: { name: string }[] }>(`/api/people?q=${encodeURIComponent(text)}`)
        .then((r) => setOptions(r.people.map((p) => p.name)))
        .catch(() => setOptions([]));
    }, 150);
    return () => clearTimeout(t);
  }, [text]);
  const add = (name: string) => {
    const n = name.replace(/\s+/g, ' ').trim();
    if (n && !value.some((v) => v.toLowerCase() === n.toLowerCase())) onChange([...value, n]);
    setText('');
  };
  return (
    <div>
      <label className="label" htmlFor={id}>{label}</label>
      <ul className="mb-2 flex flex-wrap gap-1" aria-label="People shown">
        {value.map((p) => (
          <li key={p} className="inline-flex items-center gap-1 rounded-full border border-paper-300 bg-paper-100 px-2 py-0.5 text-sm" data-person-tag>
            {p}
            <button type="button" className="text-ink-500 hover:text-danger-700" aria-label={`Remove ${p}`} onClick={() => onChange(value.filter((x) => x !== p))}>×</button>
          </li>
        ))}
      </ul>
      <input
        id={id}
        className="field"
        list={`${id}-options`}
        value={text}
        autoComplete="off"
        placeholder="Type a name, then Enter"
        onChange={(e) => setText(e.target.value)}
        onKeyDown={(e) => {
          if ((e.key === 'Enter' || e.key === ',') && text.trim()) {
            e.preventDefault();
            add(text);
          } else if (e.key === 'Backspace' && !text && value.length) onChange(value.slice(0, -1));
        }}
        onBlur={() => text.trim() && add(text)}
      />
      <datalist id={`${id}-options`}>
        {options.filter((o) => !value.includes(o)).map((o) => <option key={o} value={o} />)}
      </datalist>
    </div>
  );
}

/**
 * Captions for a batch: one print at a time with keyboard flow (Alt+↓ saves and goes to the
 * next, Alt+↑ to the previous), a bulk edit over the ticked prints, and pending suggestions
 * for editors; viewers get a suggestion form instead.
 */
export default function CaptionEditor({ batchId, items: initial, canEdit, pending: initialPending, startAt }: Props) {
  const [items, setItems] = useState(initial);
  const [index, setIndex] = useState(() => Math.max(0, initial.findIndex((i) => i.id === startAt?.toLowerCase())));
  const [draft, setDraft] = useState<Draft>(() => emptyDraft(initial[Math.max(0, initial.findIndex((i) => i.id === startAt?.toLowerCase()))]));
  const [errors, setErrors] = useState<Record<string, string>>({});
  const [status, setStatus] = useState<string | null>(null);
  const [failure, setFailure] = useState<string | null>(null);
  const [selected, setSelected] = useState<Set<string>>(new Set());
  const [bulk, setBulk] = useState({ dateEdtf: '', place: '', people: [] as string[], envelope: '' });
  const [bulkErrors, setBulkErrors] = useState<Record<string, string>>({});
  const [pending, setPending] = useState(initialPending);
  const captionRef = useRef<HTMLTextAreaElement>(null);
  const current = items[index];

  useEffect(() => {
    setDraft(emptyDraft(items[index]));
    setErrors({});
  }, [index]);

  const dirty = useMemo(() => {
    const base = emptyDraft(current);
    return JSON.stringify({ ...base, note: '' }) !== JSON.stringify({ ...draft, note: '' }) || draft.note !== '';
  }, [draft, current]);

  async function save(): Promise<boolean> {
    if (!current) return false;
    setFailure(null);
    if (!dirty) return true;
    const body = canEdit
      ? { caption: draft.caption, dateEdtf: draft.dateEdtf, place: draft.place, people: draft.people, envelope: draft.envelope, backText: draft.backText }
      : { caption: draft.caption || undefined, dateEdtf: draft.dateEdtf || undefined, place: draft.place || undefined, people: draft.people.length ? draft.people : undefined, note: draft.note || undefined };
    const check = canEdit ? metadataSchema.safeParse(body) : suggestionSchema.safeParse(body);
    const fields = fieldsOf(check);
    setErrors(fields);
    if (Object.keys(fields).length) return false;
    try {
      if (canEdit) {
        const updated = await api<ItemMetadata>(`/api/items/${current.id}/metadata`, { method: 'PATCH', body });
        setItems((list) => list.map((i) => (i.id === updated.id ? updated : i)));
        setStatus(`Saved print ${updated.seq}.`);
      } else {
        await api(`/api/items/${current.id}/suggestions`, { body });
        setDraft(emptyDraft(current));
        setStatus(`Thank you: your suggestion for print ${current.seq} waits for an editor.`);
      }
      return true;
    } catch (err) {
      if (err instanceof ApiError) {
        setErrors(err.fields);
        setFailure(err.message);
      } else setFailure(String(err));
      return false;
    }
  }

  async function go(delta: number) {
    const next = index + delta;
    if (next < 0 || next >= items.length) return;
    if (dirty && !(await save())) return;
    setIndex(next);
    requestAnimationFrame(() => captionRef.current?.focus());
  }

  function onKeyDown(e: React.KeyboardEvent) {
    if (e.altKey && e.key === 'ArrowDown') {
      e.preventDefault();
      void go(1);
    } else if (e.altKey && e.key === 'ArrowUp') {
      e.preventDefault();
      void go(-1);
    } else if ((e.ctrlKey || e.metaKey) && e.key === 'Enter') {
      e.preventDefault();
      void save();
    }
  }

  async function applyBulk(e: React.FormEvent) {
    e.preventDefault();
    setFailure(null);
    const set: Record<string, unknown> = {};
    if (bulk.dateEdtf.trim()) set.dateEdtf = bulk.dateEdtf;
    if (bulk.place.trim()) set.place = bulk.place;
    if (bulk.people.length) set.people = bulk.people;
    if (bulk.envelope.trim()) set.envelope = bulk.envelope;
    const fields = fieldsOf(metadataSchema.safeParse(set));
    if (!Object.keys(set).length) fields._ = 'Fill in at least one field to give the chosen prints.';
    setBulkErrors(fields);
    if (Object.keys(fields).length) return;
    try {
      const r = await api<{ updated: number; items: ItemMetadata[] }>(`/api/batches/${batchId}/metadata`, { method: 'PATCH', body: { itemIds: [...selected], set, peopleMode: 'add' } });
      const byId = new Map(r.items.map((i) => [i.id, i]));
      setItems((list) => list.map((i) => byId.get(i.id) ?? i));
      if (current && byId.has(current.id)) setDraft(emptyDraft(byId.get(current.id)));
      setStatus(`Gave ${r.items.length} prints the same ${Object.keys(set).map((k) => ({ dateEdtf: 'date', place: 'place', people: 'people', envelope: 'envelope' })[k]).join(', ')}.`);
      setBulk({ dateEdtf: '', place: '', people: [], envelope: '' });
    } catch (err) {
      if (err instanceof ApiError) setBulkErrors({ ...err.fields, _: err.message });
      else setFailure(String(err));
    }
  }

  async function decide(s: SuggestionView, decision: 'accept' | 'decline') {
    setFailure(null);
    try {
      await api(`/api/suggestions/${s.id}`, { body: { decision } });
      setPending((p) => ({ ...p, [s.itemId]: (p[s.itemId] ?? []).filter((x) => x.id !== s.id) }));
      if (decision === 'accept') {
        const updated = await api<ItemMetadata>(`/api/items/${s.itemId}/metadata`);
        setItems((list) => list.map((i) => (i.id === updated.id ? updated : i)));
        if (current?.id === updated.id) setDraft(emptyDraft(updated));
      }
      setStatus(decision === 'accept' ? 'Suggestion accepted and applied.' : 'Suggestion declined.');
    } catch (err) {
      setFailure(err instanceof ApiError ? err.message : String(err));
    }
  }

  const toggle = (id: string) => setSelected((s) => {
    const n = new Set(s);
    if (n.has(id)) n.delete(id);
    else n.add(id);
    return n;
  });

  if (!items.length) return <p className="card text-ink-700">This batch has no prints yet.</p>;
  const mine = current ? pending[current.id] ?? [] : [];

  return (
    <div className="grid gap-6 lg:grid-cols-[18rem_1fr]" onKeyDown={onKeyDown}>
      <section aria-label="Prints" className="card order-2 max-h-[75vh] overflow-y-auto p-3 lg:order-none">
        {canEdit && (
          <div className="mb-2 flex items-center justify-between text-sm">
            <span>{selected.size} chosen</span>
            <button type="button" className="btn-quiet py-1" onClick={() => setSelected(selected.size === items.length ? new Set() : new Set(items.map((i) => i.id)))}>
              {selected.size === items.length ? 'Choose none' : 'Choose all'}
            </button>
          </div>
        )}
        <ol className="space-y-1">
          {items.map((it, i) => (
            <li key={it.id} className={`flex items-center gap-2 rounded-md p-1 ${i === index ? 'bg-paper-100 ring-1 ring-lamp-600' : ''}`} data-caption-row={it.seq}>
              {canEdit && <input type="checkbox" aria-label={`Choose print ${it.seq}`} checked={selected.has(it.id)} onChange={() => toggle(it.id)} />}
              <button type="button" className="flex min-w-0 flex-1 items-center gap-2 text-left" onClick={() => void go(i - index)} aria-current={i === index ? 'true' : undefined}>
                <img src={it.thumbnailUrl} alt="" width={48} height={48} className="h-12 w-12 shrink-0 rounded object-cover" loading="lazy" />
                <span className="min-w-0">
                  <span className="block text-xs text-ink-500">Print {it.seq}{it.dateWords ? ` · ${it.dateWords}` : ''}</span>
                  <span className="block truncate text-sm">{it.caption || <em className="text-ink-500">no caption</em>}</span>
                </span>
                {canEdit && it.pendingSuggestions > 0 && (
                  <span className="ml-auto shrink-0 rounded-full bg-warn-100 px-2 text-xs text-warn-700" data-pending-badge>
                    {(pending[it.id]?.length ?? it.pendingSuggestions) === 1 ? '1 suggestion to look at' : `${pending[it.id]?.length ?? it.pendingSuggestions} suggestions to look at`}
                  </span>
                )}
              </button>
            </li>
          ))}
        </ol>
      </section>

      <div className="order-1 min-w-0 space-y-6 lg:order-none">
        {status && <p className="notice" role="status">{status}</p>}
        {failure && <p className="notice-error" role="alert">{failure}</p>}

        {current && (
          <form
            className="card grid gap-4 md:grid-cols-[minmax(0,16rem)_1fr]"
            onSubmit={(e) => {
              e.preventDefault();
              void save();
            }}
            aria-labelledby="caption-heading"
            data-caption-form
          >
            <div>
              <img src={`/api/items/${current.id}/preview`} alt={`Print ${current.seq}`} className="w-full rounded border border-paper-200" />
              {current.backPictureUrl && (
                <figure className="mt-3" data-caption-back>
                  <img src={current.backPictureUrl} alt={`Back of print ${current.seq}`} className="w-full rounded border border-paper-200" />
                  <figcaption className="mt-1 text-xs text-ink-500">The back of the print, as scanned</figcaption>
                </figure>
              )}
              <p className="mt-2 text-xs text-ink-500">
                {sourceInWords(current.source.kind, current.source.label) ?? 'Source not recorded'} · batch {current.source.batchName} · scan {current.originalName}
              </p>
            </div>
            <div className="space-y-3">
              <h2 id="caption-heading">{canEdit ? `Print ${current.seq} of ${items.length}` : `Suggest for print ${current.seq} of ${items.length}`}</h2>
              {!canEdit && <p className="text-sm text-ink-700">You know the faces and places: suggest what you can; an editor will look at it.</p>}
              {!canEdit && (current.caption || current.dateWords) && (
                <p className="text-sm text-ink-700">Now: {current.caption ?? 'no caption'}{current.dateWords ? ` · ${current.dateWords}` : ''}{current.people.length ? ` · ${current.people.join(', ')}` : ''}</p>
              )}
              <div>
                <label className="label" htmlFor="f-caption">Caption</label>
                <textarea id="f-caption" ref={captionRef} className="field" rows={2} value={draft.caption} onChange={(e) => setDraft({ ...draft, caption: e.target.value })} aria-invalid={!!errors.caption} aria-describedby={errors.caption ? 'e-caption' : undefined} />
                {errors.caption && <p id="e-caption" className="mt-1 text-sm text-danger-700">{errors.caption}</p>}
              </div>
              <div className="grid gap-3 sm:grid-cols-2">
                <div>
                  <label className="label" htmlFor="f-date">Date</label>
                  <input id="f-date" className="field" value={draft.dateEdtf} onChange={(e) => setDraft({ ...draft, dateEdtf: e.target.value })} aria-invalid={!!errors.dateEdtf} aria-describedby="h-date" placeholder="summer 1981" />
                  <DateHint id="h-date" value={draft.dateEdtf} />
                </div>
                <div>
                  <label className="label" htmlFor="f-place">Place</label>
                  <input id="f-place" className="field" value={draft.place} onChange={(e) => setDraft({ ...draft, place: e.target.value })} aria-invalid={!!errors.place} />
                  {errors.place && <p className="mt-1 text-sm text-danger-700">{errors.place}</p>}
                </div>
              </div>
              <PeopleField id="f-people" label="People shown" value={draft.people} onChange={(people) => setDraft({ ...draft, people })} />
              {errors.people && <p className="text-sm text-danger-700">{errors.people}</p>}
              {canEdit ? (
                <>
                  <div>
                    <label className="label" htmlFor="f-envelope">Source detail (envelope, page, sleeve)</label>
                    <input id="f-envelope" className="field" value={draft.envelope} onChange={(e) => setDraft({ ...draft, envelope: e.target.value })} />
                  </div>
                  <div>
                    <label className="label" htmlFor="f-back">Text on the back of the print</label>
                    <textarea id="f-back" className="field" rows={2} value={draft.backText} onChange={(e) => setDraft({ ...draft, backText: e.target.value })} />
                  </div>
                </>
              ) : (
                <div>
                  <label className="label" htmlFor="f-note">Note for the editor (optional)</label>
                  <textarea id="f-note" className="field" rows={2} value={draft.note} onChange={(e) => setDraft({ ...draft, note: e.target.value })} />
                </div>
              )}
              {errors._ && <p className="text-sm text-danger-700">{errors._}</p>}
              <div className="flex flex-wrap items-center gap-2">
                <button type="button" className="btn-quiet" onClick={() => void go(-1)} disabled={index === 0}>Previous</button>
                <button type="button" className="btn-primary" onClick={() => void save()} disabled={!dirty} data-save>{canEdit ? 'Save' : 'Send suggestion'}</button>
                <button type="button" className="btn-quiet" onClick={() => void go(1)} disabled={index === items.length - 1} data-next>{canEdit ? 'Save and next' : 'Next'}</button>
                <span className="text-xs text-ink-500">Alt+↓ next, Alt+↑ previous, Ctrl+Enter save</span>
              </div>
            </div>
          </form>
        )}

        {canEdit && mine.length > 0 && (
          <section className="card" aria-labelledby="sugg-heading" data-suggestions>
            <h2 id="sugg-heading">Suggestions for print {current.seq}</h2>
            <ul className="mt-3 divide-y divide-paper-200">
              {mine.map((s) => (
                <li key={s.id} className="flex flex-wrap items-start gap-3 py-2" data-suggestion={s.id}>
                  <div className="min-w-0 flex-1 text-sm">
                    <p className="text-ink-500">{s.fromBack ? 'Read from the back of the print (check it against the scan):' : `${s.suggestedBy ?? 'Someone'} suggests:`}</p>
                    {s.caption && <p>Caption: {s.caption}</p>}
                    {s.backText && <p className="whitespace-pre-line" data-suggested-back-text>Text on the back: {s.backText}</p>}
                    {s.dateEdtf && <p>Date: {s.dateWords} <code className="text-xs">{s.dateEdtf}</code></p>}
                    {s.place && <p>Place: {s.place}</p>}
                    {s.people && <p>People: {s.people.join(', ')}</p>}
                    {s.note && (s.fromBack ? <p className="text-ink-700">{s.note}</p> : <p className="text-ink-700">“{s.note}”</p>)}
                  </div>
                  <button type="button" className="btn-primary py-1" onClick={() => void decide(s, 'accept')}>Accept</button>
                  <button type="button" className="btn-quiet py-1" onClick={() => void decide(s, 'decline')}>Decline</button>
                </li>
              ))}
            </ul>
          </section>
        )}

        {canEdit && (
          <form className="card space-y-3" onSubmit={applyBulk} aria-labelledby="bulk-heading" data-bulk-form>
            <h2 id="bulk-heading">Same for the chosen prints ({selected.size})</h2>
            <p className="text-sm text-ink-700">Fill in only what the chosen prints share; empty fields are left as they are. People are added to those already named.</p>
            <div className="grid gap-3 sm:grid-cols-3">
              <div>
                <label className="label" htmlFor="b-date">Date</label>
                <input id="b-date" className="field" value={bulk.dateEdtf} onChange={(e) => setBulk({ ...bulk, dateEdtf: e.target.value })} aria-describedby="h-bdate" />
                <DateHint id="h-bdate" value={bulk.dateEdtf} />
              </div>
              <div>
                <label className="label" htmlFor="b-place">Place</label>
                <input id="b-place" className="field" value={bulk.place} onChange={(e) => setBulk({ ...bulk, place: e.target.value })} />
              </div>
              <div>
                <label className="label" htmlFor="b-envelope">Source detail</label>
                <input id="b-envelope" className="field" value={bulk.envelope} onChange={(e) => setBulk({ ...bulk, envelope: e.target.value })} />
              </div>
            </div>
            <PeopleField id="b-people" label="People shown in all of them" value={bulk.people} onChange={(people) => setBulk({ ...bulk, people })} />
            {Object.entries(bulkErrors).map(([k, v]) => <p key={k} className="text-sm text-danger-700" role="alert">{v}</p>)}
            <button className="btn-primary" type="submit" disabled={selected.size === 0}>Apply to {selected.size} prints</button>
          </form>
        )}
      </div>
    </div>
  );
}
