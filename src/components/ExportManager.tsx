import { useEffect, useState } from 'react';
import { dateInWords } from '../lib/archive/edtf.ts';
import { DEFAULT_NAME_PATTERN, namePatternSchema } from '../lib/archive/naming.ts';
import { exportProgressWords, type ExportStatus } from '../lib/archive/exports.ts';
import { api, ApiError } from './api-client.ts';
import { formatDay, formatWhen } from '../lib/archive/when.ts';

type ExportRow = ExportStatus;

interface Print {
  id: string;
  batchName: string;
  seq: number;
  caption: string | null;
  dateEdtf: string | null;
  decision: string | null;
  thumbnailUrl: string;
}

interface Props {
  counts: { sinceLast: number; lastExportAt: string | null; batches: { id: string; name: string; accepted: number }[] };
  prints: Print[];
  exports: ExportRow[];
  /** The archive's time zone, for the dates shown. */
  timeZone: string;
}

const STATE_WORDS: Record<ExportRow['state'], string> = { queued: 'Waiting to start', running: 'Being packed', ready: 'Ready', failed: 'Failed' };

/** Choose what to export, follow its progress, download the finished bags. */
export default function ExportManager({ counts, prints, exports: initial, timeZone }: Props) {
  const [kind, setKind] = useState<'since_last' | 'batch' | 'items'>('since_last');
  const [batchId, setBatchId] = useState(counts.batches.find((b) => b.accepted > 0)?.id ?? counts.batches[0]?.id ?? '');
  const [chosen, setChosen] = useState<Set<string>>(new Set());
  const [includeOriginals, setIncludeOriginals] = useState(false);
  const [pattern, setPattern] = useState(DEFAULT_NAME_PATTERN);
  const [exportsList, setExports] = useState(initial);
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const patternCheck = namePatternSchema.safeParse(pattern);

  const active = exportsList.some((e) => e.state === 'queued' || e.state === 'running');
  useEffect(() => {
    if (!active) return;
    const t = setInterval(async () => {
      try {
        const r = await api<{ exports: ExportRow[] }>('/api/exports');
        setExports(r.exports);
      } catch {
        /* the next poll tries again */
      }
    }, 1000);
    return () => clearInterval(t);
  }, [active]);

  async function start(e: React.FormEvent) {
    e.preventDefault();
    setError(null);
    if (!patternCheck.success) return setError(patternCheck.error.issues[0].message);
    const selection = kind === 'items' ? { kind, itemIds: [...chosen] } : kind === 'batch' ? { kind, batchId } : { kind };
    setBusy(true);
    try {
      const created = await api<ExportRow>('/api/exports', { body: { selection, includeOriginals, namePattern: pattern } });
      setExports((list) => [created, ...list]);
    } catch (err) {
      setError(err instanceof ApiError ? err.message + (Object.keys(err.fields).length ? ` (${Object.values(err.fields).join('; ')})` : '') : String(err));
    } finally {
      setBusy(false);
    }
  }

  const toggle = (id: string) => setChosen((s) => {
    const n = new Set(s);
    if (n.has(id)) n.delete(id);
    else n.add(id);
    return n;
  });

  return (
    <div className="space-y-6">
      <form className="card space-y-4" onSubmit={start} aria-labelledby="choose-heading" data-export-form>
        <h2 id="choose-heading">What to export</h2>
        <fieldset className="space-y-2">
          <legend className="sr-only">Choice of prints</legend>
          <label className="flex items-center gap-2">
            <input type="radio" name="kind" value="since_last" checked={kind === 'since_last'} onChange={() => setKind('since_last')} />
            Everything accepted since the last export ({counts.sinceLast} prints{counts.lastExportAt ? `, last export ${formatDay(counts.lastExportAt, timeZone)}` : ', no export yet'})
          </label>
          <label className="flex flex-wrap items-center gap-2">
            <input type="radio" name="kind" value="batch" checked={kind === 'batch'} onChange={() => setKind('batch')} />
            The accepted prints of one batch
            <select className="field w-auto py-1" aria-label="Batch" value={batchId} onChange={(e) => { setBatchId(e.target.value); setKind('batch'); }}>
              {counts.batches.map((b) => <option key={b.id} value={b.id}>{b.name} ({b.accepted})</option>)}
            </select>
          </label>
          <label className="flex items-center gap-2">
            <input type="radio" name="kind" value="items" checked={kind === 'items'} onChange={() => setKind('items')} />
            Prints I choose ({chosen.size} chosen)
          </label>
        </fieldset>
        {kind === 'items' && (
          <ul className="grid max-h-80 grid-cols-2 gap-2 overflow-y-auto sm:grid-cols-4 lg:grid-cols-6" aria-label="Prints to choose from">
            {prints.length === 0 && <li className="text-sm text-ink-500">No prints have a corrected image yet.</li>}
            {prints.map((p) => (
              <li key={p.id}>
                <label className={`block cursor-pointer rounded border p-1 text-xs ${chosen.has(p.id) ? 'border-lamp-600 ring-1 ring-lamp-600' : 'border-paper-200'}`} data-export-print={p.id}>
                  <input type="checkbox" className="mr-1" checked={chosen.has(p.id)} onChange={() => toggle(p.id)} />
                  {p.batchName} · {p.seq}
                  <img src={p.thumbnailUrl} alt="" className="mt-1 h-20 w-full rounded object-cover" loading="lazy" />
                  <span className="block truncate">{p.caption ?? <em className="text-ink-500">no caption</em>}</span>
                  {p.dateEdtf && <span className="block text-ink-500">{dateInWords(p.dateEdtf)}</span>}
                </label>
              </li>
            ))}
          </ul>
        )}
        <label className="flex items-center gap-2">
          <input type="checkbox" checked={includeOriginals} onChange={(e) => setIncludeOriginals(e.target.checked)} />
          Put the untouched scans alongside (larger, but the family keeps the originals too)
        </label>
        <div className="max-w-md">
          <label className="label" htmlFor="pattern">File names</label>
          <input id="pattern" className="field font-mono" value={pattern} onChange={(e) => setPattern(e.target.value)} aria-invalid={!patternCheck.success} aria-describedby="pattern-help" />
          <p id="pattern-help" className={`mt-1 text-xs ${patternCheck.success ? 'text-ink-500' : 'text-danger-700'}`}>
            {patternCheck.success ? 'Fields: {date} {caption} {seq} {batch} {original}. Prints go in folders by year; undated ones in the years their batch is dated to, or in "undated".' : patternCheck.error.issues[0].message}
          </p>
        </div>
        {error && <p className="notice-error" role="alert">{error}</p>}
        <button className="btn-primary" type="submit" disabled={busy || (kind === 'items' && chosen.size === 0)} data-start-export>Start the export</button>
      </form>

      <section className="card" aria-labelledby="list-heading">
        <h2 id="list-heading">Exports</h2>
        {exportsList.length === 0 ? (
          <p className="mt-2 text-sm text-ink-500">No exports yet.</p>
        ) : (
          <ul className="mt-3 divide-y divide-paper-200">
            {exportsList.map((e) => (
              <li key={e.id} id={`export-${e.id}`} className="py-3" data-export={e.id} data-state={e.state}>
                <div className="flex flex-wrap items-center gap-3 text-sm">
                  <span className="font-medium">{formatWhen(e.createdAt, timeZone)}</span>
                  <span>{e.items} prints</span>
                  <span className={e.state === 'failed' ? 'text-danger-700' : 'text-ink-700'}>{STATE_WORDS[e.state]}{e.verified ? ' · checked' : ''}</span>
                  {e.downloadUrl && (
                    <a className="btn-primary ml-auto py-1" href={e.downloadUrl} download data-download>
                      Download zip{e.zipBytes ? ` (${(e.zipBytes / 1048576).toFixed(1)} MB)` : ''}
                    </a>
                  )}
                </div>
                {(e.state === 'queued' || e.state === 'running') && (() => {
                  const p = exportProgressWords(e);
                  return (
                    <div className="mt-2" data-export-step={e.step ?? e.state}>
                      <progress className="h-2 w-full" max={100} value={p.percent} aria-label={p.words} />
                      <span className="text-xs text-ink-500" aria-live="polite">{p.words}</span>
                    </div>
                  );
                })()}
                {e.state === 'failed' && e.failureReason && <p className="mt-1 text-xs text-danger-700">{e.failureReason}</p>}
                {e.zipSha256 && <p className="mt-1 break-all font-mono text-xs text-ink-500">SHA-256 of the zip: {e.zipSha256}</p>}
              </li>
            ))}
          </ul>
        )}
      </section>
    </div>
  );
}
