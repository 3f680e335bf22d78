/**
 * The web process's one listener for item changes. PostgreSQL announces every change of an item's
 * state, batch, removal, current correction or full-size render on the `item_changed` channel when
 * its transaction commits, whichever process made it (the trigger of the migration
 * queue-state-and-item-events). This hub holds the single LISTEN connection, gathers the changes
 * of a moment per batch, reads the batch's counts (and, for those who asked, the changed items)
 * once, and hands them to every watcher: the batch event streams (api/batches/[id]/events.ts,
 * api/batches/events.ts). Watchers are authorised by their endpoint; the hub only sends a batch's
 * events to the watchers of that batch or of its archive.
 */
import pg from 'pg';
import { QueryTypes } from 'sequelize';
import { db } from '../../../db/index.ts';
import type { ItemState, StateCounts } from '../batches/schemas.ts';
import { stateCounts } from './batches.ts';
import { config } from './config.ts';

/** The channel the items trigger announces on. */
export const ITEM_CHANNEL = 'item_changed';

/** One item as the upload page lists it. */
export interface ItemStateRow {
  id: string;
  seq: number;
  originalName: string;
  state: ItemState;
  failureReason: string | null;
}

export type LiveEvent =
  /** The batch's counts per state after a change. */
  | { kind: 'counts'; batchId: string; counts: StateCounts }
  /**
   * The items of the batch that changed (for watchers that asked for items); `gone`: removed from it
   * or moved out. `full`: every item of the batch (the first event of a stream).
   */
  | { kind: 'items'; batchId: string; items: ItemStateRow[]; gone: string[]; full?: boolean }
  /** The hub lost its connection for a while: changes may have been missed, read the state again. */
  | { kind: 'stale' };

interface Watcher {
  send: (event: LiveEvent) => void;
  items: boolean;
}

/** Changes arriving this close together are sent as one event per batch. */
const GATHER_MS = 100;
const RECONNECT_MS = 1000;
/** How long a watcher waits for the LISTEN connection before its request is answered with an error. */
const READY_TIMEOUT_MS = 10_000;

const byBatch = new Map<string, Set<Watcher>>();
const byArchive = new Map<string, Set<Watcher>>();
const pending = new Map<string, { archiveId: string; itemIds: Set<string> }>();
let gatherTimer: NodeJS.Timeout | undefined;

let client: pg.Client | undefined;
let connecting: Promise<void> | undefined;
/** Set once a connection was lost: the next one tells every watcher to read the state again. */
let lostSince = false;

function watcherCount(): number {
  let n = 0;
  for (const set of [...byBatch.values(), ...byArchive.values()]) n += set.size;
  return n;
}

async function connect(): Promise<void> {
  const c = new pg.Client({ connectionString: config().databaseUrl, application_name: 'drawerlight-events', keepAlive: true });
  const lost = (why: string) => {
    if (client !== c) return;
    client = undefined;
    lostSince = true;
    console.error(`[item events] the listening connection was lost (${why}); connecting again`);
    c.end().catch(() => undefined);
    reconnectSoon();
  };
  c.on('error', (err) => lost(err.message));
  c.on('end', () => lost('ended'));
  c.on('notification', (msg) => {
    if (msg.channel === ITEM_CHANNEL && msg.payload) noteChange(msg.payload);
  });
  await c.connect();
  await c.query(`LISTEN ${ITEM_CHANNEL}`);
  client = c;
  if (lostSince) {
    lostSince = false;
    for (const set of [...byBatch.values(), ...byArchive.values()]) for (const w of set) w.send({ kind: 'stale' });
  }
}

/** Connects again while anyone watches, until it works. */
function reconnectSoon(): void {
  if (watcherCount() === 0) return;
  setTimeout(() => {
    listening().catch((err) => {
      console.error(`[item events] cannot connect (${(err as Error).message}); trying again`);
      reconnectSoon();
    });
  }, RECONNECT_MS).unref();
}

/** Resolves once the hub's LISTEN connection is open (opening it when needed). */
function listening(): Promise<void> {
  if (client) return Promise.resolve();
  connecting ??= connect().finally(() => {
    connecting = undefined;
  });
  return connecting;
}

function noteChange(payload: string): void {
  let change: { a: string; b: string; i: string };
  try {
    change = JSON.parse(payload);
  } catch {
    return;
  }
  if (!byBatch.has(change.b) && !byArchive.has(change.a)) return;
  const p = pending.get(change.b) ?? { archiveId: change.a, itemIds: new Set<string>() };
  p.itemIds.add(change.i);
  pending.set(change.b, p);
  gatherTimer ??= setTimeout(() => {
    gatherTimer = undefined;
    void fanOut();
  }, GATHER_MS);
}

async function itemRows(ids: string[]): Promise<(ItemStateRow & { batchId: string })[]> {
  const rows = await db().query<{ id: string; batch_id: string; seq: number; original_name: string; state: ItemState; failure_reason: string | null }>(
    'SELECT id, batch_id, seq, original_name, state, failure_reason FROM items WHERE id IN (:ids) AND deleted_at IS NULL',
    { replacements: { ids }, type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ id: r.id, batchId: r.batch_id, seq: r.seq, originalName: r.original_name, state: r.state, failureReason: r.failure_reason }));
}

async function fanOut(): Promise<void> {
  const batches = [...pending].filter(([batchId, p]) => byBatch.has(batchId) || byArchive.has(p.archiveId));
  pending.clear();
  if (batches.length === 0) return;
  try {
    const counts = await stateCounts(batches.map(([batchId]) => batchId));
    for (const [batchId, p] of batches) {
      const event: LiveEvent = { kind: 'counts', batchId, counts: counts.get(batchId)! };
      const watchers = [...(byBatch.get(batchId) ?? [])];
      for (const w of [...watchers, ...(byArchive.get(p.archiveId) ?? [])]) w.send(event);
      if (watchers.some((w) => w.items)) {
        const ids = [...p.itemIds];
        const rows = (await itemRows(ids)).filter((r) => r.batchId === batchId);
        const items = rows.map(({ batchId: _b, ...row }) => row);
        const gone = ids.filter((id) => !rows.some((r) => r.id === id));
        for (const w of watchers) if (w.items) w.send({ kind: 'items', batchId, items, gone });
      }
    }
  } catch (err) {
    // the database is out of reach for a moment: the same batches are read again shortly
    console.error('[item events] reading the changes failed:', (err as Error).message);
    for (const [batchId, p] of batches) {
      const again = pending.get(batchId) ?? { archiveId: p.archiveId, itemIds: new Set<string>() };
      for (const id of p.itemIds) again.itemIds.add(id);
      pending.set(batchId, again);
    }
    gatherTimer ??= setTimeout(() => {
      gatherTimer = undefined;
      void fanOut();
    }, RECONNECT_MS);
  }
}

function add(map: Map<string, Set<Watcher>>, key: string, w: Watcher): () => void {
  const set = map.get(key) ?? new Set<Watcher>();
  set.add(w);
  map.set(key, set);
  return () => {
    set.delete(w);
    if (set.size === 0 && map.get(key) === set) map.delete(key);
  };
}

async function whenListening(): Promise<void> {
  let timer: NodeJS.Timeout | undefined;
  try {
    await Promise.race([
      listening(),
      new Promise((_, reject) => {
        timer = setTimeout(() => reject(new Error('the item events connection could not be opened')), READY_TIMEOUT_MS);
      }),
    ]);
  } finally {
    clearTimeout(timer);
  }
}

/** Counts of every batch of an archive that is not removed, by batch id. */
export async function archiveCounts(archiveId: string): Promise<Map<string, StateCounts>> {
  const rows = await db().query<{ id: string }>('SELECT id FROM batches WHERE archive_id = :archiveId AND deleted_at IS NULL', { replacements: { archiveId }, type: QueryTypes.SELECT });
  return stateCounts(rows.map((r) => r.id));
}

/**
 * Watches one batch (already authorised by the caller): `send` gets its counts after each change,
 * and with `items` the changed items too. Resolves, once changes are being listened for, to the
 * call that stops watching.
 */
export function watchBatch(batchId: string, options: { items: boolean }, send: (event: LiveEvent) => void): Promise<() => void> {
  return onceListening(add(byBatch, batchId, { send, items: options.items }));
}

/** Watches every batch of one archive (already authorised by the caller): counts only. */
export function watchArchive(archiveId: string, send: (event: LiveEvent) => void): Promise<() => void> {
  return onceListening(add(byArchive, archiveId, { send, items: false }));
}

/** Resolves to `stop` once changes are being listened for; if listening fails, stops the watch and rejects. */
async function onceListening(stop: () => void): Promise<() => void> {
  try {
    await whenListening();
  } catch (err) {
    stop();
    throw err;
  }
  return stop;
}
