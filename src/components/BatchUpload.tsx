import { useCallback, useEffect, useMemo, useReducer, useRef, useState } from 'react';
import { useDropzone, type FileRejection } from 'react-dropzone';
import { watchBatch } from './live-batch.ts';
import { describeLimits, FILE_NAME_HEADER, ITEM_STATE_LABELS, type ItemState, type UploadLimits, type UploadOutcome } from '../lib/batches/schemas.ts';

/** One item of the batch as the server knows it. */
export interface ServerItem {
  id: string;
  seq: number;
  originalName: string;
  state: ItemState;
  failureReason: string | null;
}

interface Props {
  batchId: string;
  batchName: string;
  limits: UploadLimits;
  /** What the server already holds for this batch when the page was made. */
  items: ServerItem[];
}

type UploadStatus = 'waiting' | 'uploading' | 'retrying' | 'added' | 'duplicate' | 'rejected' | 'failed';

interface Entry {
  key: string;
  file: File;
  name: string;
  status: UploadStatus;
  sent: number;
  attempts: number;
  message?: string;
  itemId?: string;
  /** The drop the file came in with: the server numbers one drop's prints by file name. */
  uploadKey: string;
}

type Action =
  | { type: 'add'; entries: Entry[] }
  | { type: 'update'; key: string; patch: Partial<Entry> };

function reducer(state: Entry[], action: Action): Entry[] {
  if (action.type === 'add') return [...state, ...action.entries];
  return state.map((e) => (e.key === action.key ? { ...e, ...action.patch } : e));
}

/** Uploads at once: enough to keep the server busy, few enough to keep each file's progress moving. */
const AT_ONCE = 4;
const MAX_ATTEMPTS = 4;
const BACKOFF_MS = [1000, 3000, 8000];

class UploadError extends Error {
  constructor(readonly status: number, message: string, readonly retryable: boolean) {
    super(message);
  }
}

/** Sends one file as the raw request body (XMLHttpRequest: fetch cannot report upload progress). */
function sendFile(url: string, entry: Entry, onProgress: (sent: number) => void): Promise<{ status: number; body: any }> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    xhr.open('POST', url);
    xhr.setRequestHeader('content-type', 'application/octet-stream');
    xhr.setRequestHeader('accept', 'application/json');
    xhr.setRequestHeader(FILE_NAME_HEADER, encodeURIComponent(entry.name));
    xhr.setRequestHeader('x-upload-key', entry.uploadKey);
    xhr.upload.onprogress = (e) => onProgress(e.loaded);
    xhr.onload = () => {
      let body: any = null;
      try {
        body = JSON.parse(xhr.responseText);
      } catch {
        /* not JSON */
      }
      if (xhr.status >= 200 && xhr.status < 300) resolve({ status: xhr.status, body });
      else {
        const retryable = xhr.status >= 500 || xhr.status === 429 || xhr.status === 408;
        reject(new UploadError(xhr.status, body?.error?.message ?? `The server answered ${xhr.status}.`, retryable));
      }
    };
    xhr.onerror = () => reject(new UploadError(0, 'The connection was lost.', true));
    xhr.ontimeout = () => reject(new UploadError(0, 'The upload timed out.', true));
    xhr.send(entry.file);
  });
}

const STATUS_TEXT: Record<UploadStatus, string> = {
  waiting: 'Waiting to upload',
  uploading: 'Uploading',
  retrying: 'Retrying soon',
  added: 'Uploaded',
  duplicate: 'Already in the archive',
  rejected: 'Not taken',
  failed: 'Upload failed',
};

const fileKey = (f: File, name: string) => `${name}\u0000${f.size}\u0000${f.lastModified}`;
const pathOf = (f: File) => ((f as File & { path?: string }).path || f.webkitRelativePath || f.name).replace(/^\.?\//, '');
const mb = (n: number) => (n < 1048576 ? `${Math.max(1, Math.round(n / 1024))} KB` : `${(n / 1048576).toFixed(n < 10 * 1048576 ? 1 : 0)} MB`);

/**
 * The upload island: drop hundreds of scans or a whole folder; four go up at a time, each with
 * its own progress and the batch with an overall bar; failed uploads are retried with backoff
 * and can be retried again by hand; refused files are listed with the server's reason. The
 * processing state comes from the server, so leaving and coming back shows the truth.
 */
export default function BatchUpload({ batchId, batchName, limits, items: initialItems }: Props) {
  const [entries, dispatch] = useReducer(reducer, []);
  const [serverItems, setServerItems] = useState<Map<string, ServerItem>>(() => new Map(initialItems.map((i) => [i.id, i])));
  const active = useRef(new Set<string>());
  const seen = useRef(new Set<string>());
  const entriesRef = useRef(entries);
  entriesRef.current = entries;
  const folderInput = useRef<HTMLInputElement>(null);

  const upload = useCallback(
    async (entry: Entry) => {
      active.current.add(entry.key);
      const attempt = entry.attempts + 1;
      dispatch({ type: 'update', key: entry.key, patch: { status: 'uploading', attempts: attempt, sent: 0, message: undefined } });
      try {
        const { body } = await sendFile(`/api/batches/${batchId}/files`, entry, (sent) => dispatch({ type: 'update', key: entry.key, patch: { sent } }));
        const r = body as UploadOutcome;
        const message = r.outcome === 'duplicate' && r.existing ? `Same file as #${r.existing.seq} “${r.existing.originalName}” in “${r.existing.batchName}”: kept once, not uploaded again.` : undefined;
        dispatch({ type: 'update', key: entry.key, patch: { status: r.outcome, sent: entry.file.size, itemId: r.item.id, message } });
        setServerItems((m) => (m.has(r.item.id) || r.item.batchId !== batchId ? m : new Map(m).set(r.item.id, { ...r.item, failureReason: null })));
      } catch (err) {
        const e = err instanceof UploadError ? err : new UploadError(0, String(err), true);
        if (!e.retryable) {
          dispatch({ type: 'update', key: entry.key, patch: { status: 'rejected', message: e.message } });
        } else if (attempt < MAX_ATTEMPTS) {
          dispatch({ type: 'update', key: entry.key, patch: { status: 'retrying', message: e.message } });
          await new Promise((r) => setTimeout(r, BACKOFF_MS[Math.min(attempt - 1, BACKOFF_MS.length - 1)]));
          dispatch({ type: 'update', key: entry.key, patch: { status: 'waiting' } });
        } else {
          dispatch({ type: 'update', key: entry.key, patch: { status: 'failed', message: `${e.message} Tried ${attempt} times.` } });
        }
      } finally {
        active.current.delete(entry.key);
      }
    },
    [batchId],
  );

  // The scheduler: whenever something changes, start waiting files until AT_ONCE are under way.
  useEffect(() => {
    const running = entries.filter((e) => active.current.has(e.key)).length;
    let free = AT_ONCE - running;
    for (const e of entries) {
      if (free <= 0) break;
      if (e.status === 'waiting' && !active.current.has(e.key)) {
        free--;
        void upload(e);
      }
    }
  }, [entries, upload]);

  // Processing states pushed by the server (live-batch.ts): every item at each connection, then each change.
  useEffect(
    () =>
      watchBatch(batchId, {
        items: (items, gone, full) =>
          setServerItems((m) => {
            const next = full ? new Map<string, ServerItem>() : new Map(m);
            for (const id of gone) next.delete(id);
            for (const i of items) next.set(i.id, i);
            return next;
          }),
      }),
    [batchId],
  );

  const onDrop = useCallback(
    (accepted: File[], refused: FileRejection[]) => {
      const fresh: Entry[] = [];
      // getRandomValues works on a plain-http address too, where randomUUID is not offered
      const uploadKey = Array.from(crypto.getRandomValues(new Uint8Array(12)), (b) => b.toString(16).padStart(2, '0')).join('');
      for (const file of [...accepted, ...refused.map((r) => r.file)]) {
        const name = pathOf(file);
        if (/(^|\/)\.[^/]*$/.test(name) || /(^|\/)(Thumbs\.db|desktop\.ini)$/i.test(name)) continue;
        const key = fileKey(file, name);
        if (seen.current.has(key)) continue;
        seen.current.add(key);
        const tooLarge = file.size > limits.maxBytes;
        fresh.push({
          key,
          file,
          name,
          sent: 0,
          attempts: 0,
          uploadKey,
          status: tooLarge ? 'rejected' : 'waiting',
          message: tooLarge ? `The file is ${mb(file.size)}; the limit is ${mb(limits.maxBytes)}.` : undefined,
        });
      }
      if (fresh.length) dispatch({ type: 'add', entries: fresh });
    },
    [limits.maxBytes],
  );

  const { getRootProps, getInputProps, isDragActive, open } = useDropzone({ onDrop, noClick: true, noKeyboard: true, multiple: true });

  const retryFailed = () => {
    for (const e of entriesRef.current) if (e.status === 'failed') dispatch({ type: 'update', key: e.key, patch: { status: 'waiting', attempts: 0, message: undefined } });
  };

  const totals = useMemo(() => {
    const bytes = entries.filter((e) => e.status !== 'rejected').reduce((n, e) => n + e.file.size, 0);
    const sent = entries.filter((e) => e.status !== 'rejected').reduce((n, e) => n + (e.status === 'added' || e.status === 'duplicate' ? e.file.size : e.sent), 0);
    const count = (s: UploadStatus) => entries.filter((e) => e.status === s).length;
    return { bytes, sent, added: count('added'), duplicate: count('duplicate'), rejected: count('rejected'), failed: count('failed'), inFlight: count('waiting') + count('uploading') + count('retrying') };
  }, [entries]);

  const earlier = [...serverItems.values()].filter((i) => !entries.some((e) => e.itemId === i.id)).sort((a, b) => a.seq - b.seq);

  return (
    <div className="space-y-5">
      <div
        {...getRootProps({
          className: `rounded-lg border-2 border-dashed p-8 text-center transition-colors ${isDragActive ? 'border-lamp-600 bg-lamp-500/10' : 'border-paper-300 bg-white'}`,
          'aria-label': `Drop scans for the batch ${batchName} here`,
        })}
        data-dropzone
      >
        <input {...getInputProps()} data-testid="dropzone-input" aria-label="Choose scans" />
        <input
          ref={folderInput}
          type="file"
          className="hidden"
          multiple
          aria-label="Choose a folder of scans"
          data-testid="folder-input"
          {...({ webkitdirectory: '', directory: '' } as Record<string, string>)}
          onChange={(e) => {
            onDrop(Array.from(e.target.files ?? []), []);
            e.target.value = '';
          }}
        />
        <p className="text-base font-medium text-ink-900">{isDragActive ? 'Drop the scans to add them' : 'Drag scans or a whole folder here'}</p>
        <p className="mt-1 text-sm text-ink-700" data-limits>{describeLimits(limits)} The type is judged by the file’s content, not its name.</p>
        <div className="mt-4 flex flex-wrap justify-center gap-3">
          <button type="button" className="btn-primary" onClick={open}>Choose scans …</button>
          <button type="button" className="btn-quiet" onClick={() => folderInput.current?.click()}>Choose a folder …</button>
        </div>
      </div>

      {entries.length > 0 && (
        <section aria-labelledby="upload-progress-heading" className="card space-y-3">
          <div className="flex flex-wrap items-center justify-between gap-3">
            <h2 id="upload-progress-heading">This upload</h2>
            {totals.failed > 0 && (
              <button type="button" className="btn-quiet" onClick={retryFailed} data-retry-failed>Retry failed uploads ({totals.failed})</button>
            )}
          </div>
          <div
            className="h-2.5 w-full overflow-hidden rounded-full bg-paper-100"
            role="progressbar"
            aria-label="Upload progress"
            aria-valuemin={0}
            aria-valuemax={100}
            aria-valuenow={totals.bytes ? Math.round((totals.sent / totals.bytes) * 100) : 0}
          >
            <div className="h-full bg-lamp-600" style={{ width: `${totals.bytes ? (totals.sent / totals.bytes) * 100 : 0}%` }} />
          </div>
          <p className="text-sm text-ink-700" aria-live="polite" data-upload-summary>
            {totals.added} uploaded{totals.duplicate ? `, ${totals.duplicate} already in the archive` : ''}{totals.rejected ? `, ${totals.rejected} not taken` : ''}{totals.failed ? `, ${totals.failed} failed` : ''}{totals.inFlight ? `, ${totals.inFlight} to go` : ''}. {mb(totals.sent)} of {mb(totals.bytes)}.
          </p>
          <ul className="max-h-[28rem] divide-y divide-paper-200 overflow-y-auto text-sm" data-upload-list>
            {entries.map((e) => {
              const server = e.itemId ? serverItems.get(e.itemId) : undefined;
              const percent = e.file.size ? Math.round(((e.status === 'added' || e.status === 'duplicate' ? e.file.size : e.sent) / e.file.size) * 100) : 100;
              return (
                <li key={e.key} className="flex flex-wrap items-center gap-x-3 gap-y-1 py-2" data-upload={e.name} data-status={e.status} data-state={server?.state ?? ''}>
                  <span className="min-w-0 flex-1 truncate font-medium" title={e.name}>{e.name}</span>
                  <span className="text-ink-500 tabular-nums">{mb(e.file.size)}</span>
                  {(e.status === 'uploading' || e.status === 'waiting' || e.status === 'retrying') && (
                    <progress className="h-2 w-28" max={100} value={percent} aria-label={`Upload of ${e.name}`} />
                  )}
                  <span className={e.status === 'rejected' || e.status === 'failed' ? 'text-danger-700' : 'text-ink-700'}>
                    {server && e.status === 'added' ? ITEM_STATE_LABELS[server.state] : STATUS_TEXT[e.status]}
                  </span>
                  {(e.message || server?.failureReason) && <span className="basis-full text-xs text-ink-500" data-reason>{server?.failureReason ?? e.message}</span>}
                </li>
              );
            })}
          </ul>
        </section>
      )}

      {earlier.length > 0 && (
        <section aria-labelledby="earlier-heading" className="card">
          <h2 id="earlier-heading">Already in this batch ({earlier.length})</h2>
          <ul className="mt-2 max-h-72 divide-y divide-paper-200 overflow-y-auto rounded text-sm focus:outline-none focus-visible:ring-2 focus-visible:ring-lamp-600" tabIndex={0} aria-labelledby="earlier-heading" data-earlier-list>
            {earlier.map((i) => (
              <li key={i.id} className="flex flex-wrap gap-x-3 py-1.5" data-item={i.originalName} data-state={i.state}>
                <span className="w-12 text-ink-500 tabular-nums">#{i.seq}</span>
                <span className="min-w-0 flex-1 truncate">{i.originalName}</span>
                <span className={i.state === 'failed' ? 'text-danger-700' : 'text-ink-700'}>{ITEM_STATE_LABELS[i.state]}</span>
                {i.failureReason && <span className="basis-full pl-14 text-xs text-ink-500">{i.failureReason}</span>}
              </li>
            ))}
          </ul>
        </section>
      )}
    </div>
  );
}
