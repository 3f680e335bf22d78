/**
 * The browser's side of the pushed batch status: one EventSource per batch (or one for the batch
 * list) shared by every island of the page. Each connection starts with the state as it is (the
 * server sends it first), so a stream that dropped and came back, or that said it may have missed
 * changes (`stale`), is simply opened again: nothing polls.
 */
import type { StateCounts } from '../lib/batches/schemas.ts';
import type { ItemState } from '../lib/batches/schemas.ts';

/** One item of a batch as the events carry it. */
export interface LiveItem {
  id: string;
  seq: number;
  originalName: string;
  state: ItemState;
  failureReason: string | null;
}

export interface LiveHandlers {
  /** A batch's counts (at each connection, then after every change). */
  counts?: (batchId: string, counts: StateCounts) => void;
  /** Items that changed, and those removed or moved out; `full` at each connection: every item of the batch. */
  items?: (items: LiveItem[], gone: string[], full: boolean) => void;
  /** Whether the stream is connected. */
  live?: (connected: boolean) => void;
}

/** After a refusal or an error answer EventSource stops for good; the page tries again this much later. */
const REOPEN_MS = 5000;

interface Shared {
  url: string;
  source?: EventSource;
  listeners: Set<LiveHandlers>;
  reopen?: ReturnType<typeof setTimeout>;
}

const shared = new Map<string, Shared>();

function open(s: Shared): void {
  clearTimeout(s.reopen);
  s.source?.close();
  const source = new EventSource(s.url);
  s.source = source;
  source.addEventListener('open', () => s.listeners.forEach((l) => l.live?.(true)));
  source.addEventListener('counts', (e) => {
    const data = JSON.parse((e as MessageEvent).data) as { batchId: string; counts: StateCounts };
    s.listeners.forEach((l) => l.counts?.(data.batchId, data.counts));
  });
  source.addEventListener('items', (e) => {
    const data = JSON.parse((e as MessageEvent).data) as { items: LiveItem[]; gone: string[]; full?: boolean };
    s.listeners.forEach((l) => l.items?.(data.items, data.gone, Boolean(data.full)));
  });
  // the server lost track for a while: a new connection starts from the state as it is
  source.addEventListener('stale', () => open(s));
  source.addEventListener('error', () => {
    s.listeners.forEach((l) => l.live?.(false));
    // EventSource connects again by itself after a dropped stream, but not after an error answer
    if (source.readyState === EventSource.CLOSED && s.source === source) s.reopen = setTimeout(() => open(s), REOPEN_MS);
  });
}

function watch(key: string, url: string, handlers: LiveHandlers): () => void {
  let s = shared.get(key);
  if (!s) {
    s = { url, listeners: new Set() };
    shared.set(key, s);
  }
  s.listeners.add(handlers);
  // a listener that needs more than the open stream gives: open it again with more (it starts with the whole state)
  if (!s.source || s.url !== url) {
    s.url = url;
    open(s);
  } else if (s.source.readyState === EventSource.OPEN) {
    handlers.live?.(true);
  }
  const entry = s;
  return () => {
    entry.listeners.delete(handlers);
    if (entry.listeners.size > 0) return;
    clearTimeout(entry.reopen);
    entry.source?.close();
    shared.delete(key);
  };
}

/** Follows one batch; with `handlers.items` its items too. Returns the call that stops following. */
export function watchBatch(batchId: string, handlers: LiveHandlers): () => void {
  const current = shared.get(batchId);
  const withItems = Boolean(handlers.items) || Boolean(current?.url.endsWith('?items=1'));
  return watch(batchId, `/api/batches/${batchId}/events${withItems ? '?items=1' : ''}`, handlers);
}

/** Follows the counts of every batch of the current archive (the batch list): one stream for all. */
export function watchArchiveBatches(handlers: LiveHandlers): () => void {
  return watch('archive', '/api/batches/events', handlers);
}
