/**
 * State of the print review view: the print on screen, the operator's working correction, the
 * compare view's layout, split and zoom, and the actions that talk to the API. One store per page.
 */
import { create } from 'zustand';
import type { Correction } from '../../lib/restoration/correction.ts';
import type { Triplet } from '../../lib/restoration/colour.ts';
import { dyeGain, sameCorrection, withDyeGain, withStrength, withWhitePoint } from '../../lib/review/adjust.ts';
import type { ItemDetail } from '../../lib/review/types.ts';
import type { Decision, DyeName, NegativeAvailability, ShortcutAction } from '../../lib/review/words.ts';
import { api, ApiError } from '../api-client.ts';

/** One print of the batch, in review order, as far as the view needs to know it. */
export interface QueueEntry {
  id: string;
  seq: number;
  decision: Decision | null;
  state: string;
}

export type Layout = 'split' | 'side';

/** Keys that change the correction: a viewer has no controls for them, so they do nothing and are not listed. */
export const EDITING_ACTIONS: ReadonlySet<ShortcutAction> = new Set<ShortcutAction>(['pickWhite', 'strengthDown', 'strengthUp', 'reset', 'save']);

/** Screen transform of the scan: screen = scan pixel × scale + offset (per half in side-by-side). */
export interface ViewTransform {
  scale: number;
  x: number;
  y: number;
  /** True while the transform is the automatic fit (re-fitted when the frame resizes). */
  fitted: boolean;
}

export interface Notice {
  kind: 'info' | 'error' | 'conflict';
  text: string;
}

export interface RescanForm {
  negativeAvailable: NegativeAvailability;
  negativeLocation: string;
  rescanNote: string;
}

export interface ReviewState {
  item: ItemDetail | null;
  queue: QueueEntry[];
  canDecide: boolean;
  /** The correction the preview shows; differs from `item.current` while the operator adjusts. */
  working: Correction | null;
  layout: Layout;
  /** Split position as a fraction of the frame's width. */
  split: number;
  view: ViewTransform;
  holdOriginal: boolean;
  picking: boolean;
  helpOpen: boolean;
  rescanOpen: boolean;
  rescan: RescanForm;
  busy: boolean;
  notice: Notice | null;
  /** Item details fetched ahead (the next print), by id. */
  ahead: Record<string, ItemDetail>;

  init(item: ItemDetail, queue: QueueEntry[], canDecide: boolean): void;
  dirty(): boolean;
  setSplit(fraction: number): void;
  setView(v: Partial<ViewTransform>): void;
  setLayout(l: Layout): void;
  setHoldOriginal(on: boolean): void;
  setPicking(on: boolean): void;
  setHelp(open: boolean): void;
  setRescanOpen(open: boolean): void;
  setRescan(f: Partial<RescanForm>): void;
  setNotice(n: Notice | null): void;
  setStrength(s: number): void;
  nudgeStrength(delta: number): void;
  setDyeGain(dye: DyeName, gain: number): void;
  pickWhitePoint(srgb: Triplet): void;
  /** Changes the working correction by an edit of src/lib/review/adjust.ts (black point, contrast, curves, turns, crop). */
  adjust(edit: (c: Correction) => Correction): void;
  /** Uses the saved correction of the print on screen on the chosen prints of its batch. */
  copyTo(ids: string[], withGeometry: boolean): Promise<boolean>;
  resetToProposed(): void;
  save(): Promise<void>;
  restore(version: number): Promise<void>;
  decide(decision: Decision): Promise<void>;
  go(id: string): Promise<void>;
  next(): Promise<void>;
  previous(): Promise<void>;
  reload(): Promise<void>;
  prefetch(id: string): Promise<ItemDetail | null>;
}

const EMPTY_RESCAN: RescanForm = { negativeAvailable: 'unknown', negativeLocation: '', rescanNote: '' };

function rescanFromItem(item: ItemDetail): RescanForm {
  return {
    negativeAvailable: (item.negativeAvailable as NegativeAvailability) ?? 'unknown',
    negativeLocation: item.negativeLocation ?? '',
    rescanNote: item.rescanNote ?? '',
  };
}

function message(err: unknown): Notice {
  if (err instanceof ApiError) return { kind: err.status === 409 ? 'conflict' : 'error', text: err.message };
  return { kind: 'error', text: 'The server could not be reached. Nothing was lost; try again.' };
}

/** The view's URL follows the print on screen, so a reload or a shared link opens the same print. */
function showInAddressBar(id: string) {
  if (typeof window !== 'undefined' && !window.location.pathname.endsWith(id)) window.history.replaceState(null, '', `/items/${id}`);
}

export const useReview = create<ReviewState>()((set, get) => ({
  item: null,
  queue: [],
  canDecide: false,
  working: null,
  layout: 'split',
  split: 0.5,
  view: { scale: 1, x: 0, y: 0, fitted: true },
  holdOriginal: false,
  picking: false,
  helpOpen: false,
  rescanOpen: false,
  rescan: EMPTY_RESCAN,
  busy: false,
  notice: null,
  ahead: {},

  init(item, queue, canDecide) {
    set({ item, queue, canDecide, working: item.current, rescan: rescanFromItem(item), notice: null });
  },
  dirty() {
    const { item, working } = get();
    return !!item?.current && !!working && !sameCorrection(item.current, working);
  },
  setSplit(fraction) {
    set({ split: Math.min(1, Math.max(0, fraction)) });
  },
  setView(v) {
    set((s) => ({ view: { ...s.view, fitted: false, ...v } }));
  },
  setLayout(layout) {
    set((s) => ({ layout, view: { ...s.view, fitted: true } }));
  },
  setHoldOriginal(holdOriginal) {
    if (get().holdOriginal !== holdOriginal) set({ holdOriginal });
  },
  setPicking(picking) {
    set({ picking, notice: picking ? { kind: 'info', text: 'Click a spot of paper base, or something that should be neutral, on the print.' } : get().notice });
  },
  setHelp(helpOpen) {
    set({ helpOpen });
  },
  setRescanOpen(rescanOpen) {
    set({ rescanOpen });
  },
  setRescan(f) {
    set((s) => ({ rescan: { ...s.rescan, ...f } }));
  },
  setNotice(notice) {
    set({ notice });
  },
  setStrength(strength) {
    const w = get().working;
    if (w) set({ working: withStrength(w, strength) });
  },
  nudgeStrength(delta) {
    const w = get().working;
    if (w) set({ working: withStrength(w, w.strength + delta) });
  },
  setDyeGain(dye, gain) {
    const w = get().working;
    if (w && dyeGain(w, dye) !== gain) set({ working: withDyeGain(w, dye, gain) });
  },
  pickWhitePoint(srgb) {
    const w = get().working;
    if (w) set({ working: withWhitePoint(w, srgb), picking: false, notice: { kind: 'info', text: 'White point set from the spot you picked.' } });
  },
  adjust(edit) {
    const w = get().working;
    if (w) set({ working: edit(w) });
  },
  async copyTo(ids, withGeometry) {
    const { item, busy } = get();
    if (!item || busy || ids.length === 0) return false;
    if (get().dirty()) {
      set({ notice: { kind: 'info', text: 'Save your changes first: the saved version is what the other prints get.' } });
      return false;
    }
    set({ busy: true });
    try {
      const res = await api<{ copied: { id: string; seq: number; version: number }[] }>(`/api/items/${item.id}/corrections/copies`, {
        body: { to: ids, fromVersion: item.currentVersion ?? undefined, withGeometry },
      });
      const seqs = res.copied.map((c) => c.seq);
      const names = seqs.length === 1 ? `print ${seqs[0]}` : `prints ${seqs.slice(0, -1).join(', ')} and ${seqs.at(-1)}`;
      // the prints fetched ahead now have a newer version
      set((s) => ({ ahead: Object.fromEntries(Object.entries(s.ahead).filter(([id]) => !ids.includes(id))), notice: { kind: 'info', text: `This correction is now used on ${names}, each as a new version; their full-size renders are on their way.` } }));
      return true;
    } catch (err) {
      set({ notice: message(err) });
      return false;
    } finally {
      set({ busy: false });
    }
  },
  resetToProposed() {
    const { item } = get();
    if (item?.proposed) set({ working: item.proposed, notice: { kind: 'info', text: 'Back to the proposed correction (not saved yet).' } });
  },

  async save() {
    const { item, working, busy } = get();
    if (!item || !working || busy) return;
    if (!get().dirty()) {
      set({ notice: { kind: 'info', text: 'Nothing to save: the preview is the saved version.' } });
      return;
    }
    set({ busy: true });
    try {
      const res = await api<{ version: number; item: ItemDetail }>(`/api/items/${item.id}/corrections`, {
        body: { params: working, basedOnVersion: item.currentVersion ?? undefined },
      });
      set({ item: res.item, working: res.item.current, notice: { kind: 'info', text: `Saved as version ${res.version}. The full-size render is on its way.` } });
    } catch (err) {
      set({ notice: message(err) });
    } finally {
      set({ busy: false });
    }
  },

  async restore(version) {
    const { item, busy } = get();
    if (!item || busy) return;
    set({ busy: true });
    try {
      const res = await api<{ version: number; item: ItemDetail }>(`/api/items/${item.id}/corrections/${version}/restore`, { method: 'POST', body: {} });
      set({ item: res.item, working: res.item.current, notice: { kind: 'info', text: `Version ${version} is current again (saved as version ${res.version}).` } });
    } catch (err) {
      set({ notice: message(err) });
    } finally {
      set({ busy: false });
    }
  },

  async decide(decision) {
    const { item, working, busy, canDecide, rescan } = get();
    if (!item || busy) return;
    if (!canDecide) {
      set({ notice: { kind: 'error', text: 'Viewers can look and suggest; an editor makes the decisions.' } });
      return;
    }
    const dirty = get().dirty();
    if (decision === 'accepted' && dirty) {
      set({ notice: { kind: 'info', text: 'You have changes that are not saved: press D to accept with them, or U to go back to the proposal.' } });
      return;
    }
    const body: Record<string, unknown> = { decision, lockVersion: item.lockVersion };
    if (decision === 'accepted_adjusted') {
      const adjustedSaved = item.corrections.find((c) => c.version === item.currentVersion)?.origin;
      if (dirty) body.correction = working;
      else if (adjustedSaved !== 'operator' && adjustedSaved !== 'restored') {
        set({ notice: { kind: 'info', text: 'Nothing is changed yet: adjust the print first, or press A to accept it as proposed.' } });
        return;
      }
    }
    if (decision === 'rescan') {
      body.negativeAvailable = rescan.negativeAvailable;
      if (rescan.negativeLocation.trim()) body.negativeLocation = rescan.negativeLocation.trim();
      if (rescan.rescanNote.trim()) body.rescanNote = rescan.rescanNote.trim();
    }
    set({ busy: true });
    try {
      const res = await api<{ item: ItemDetail }>(`/api/items/${item.id}/decision`, { body });
      const queue = get().queue.map((q) => (q.id === item.id ? { ...q, decision } : q));
      set({ item: res.item, working: res.item.current, queue, rescanOpen: false });
      const after = queue.findIndex((q) => q.id === item.id);
      const nextUndecided = [...queue.slice(after + 1), ...queue.slice(0, after)].find((q) => !q.decision && q.state === 'ready');
      const words = { accepted: 'Accepted', accepted_adjusted: 'Accepted with your changes', rescan: 'Set aside for a rescan', skipped: 'Left for later' }[decision];
      if (nextUndecided) {
        await get().go(nextUndecided.id);
        set({ notice: { kind: 'info', text: `${words}: print ${item.seq}. This is the next one not yet reviewed.` } });
      } else {
        set({ notice: { kind: 'info', text: `${words}. Every print of this batch has a decision now.` } });
      }
    } catch (err) {
      set({ notice: message(err) });
    } finally {
      set({ busy: false });
    }
  },

  async prefetch(id) {
    const have = get().ahead[id];
    if (have) return have;
    try {
      const res = await api<{ item: ItemDetail }>(`/api/items/${id}`);
      set((s) => ({ ahead: { ...s.ahead, [id]: res.item } }));
      return res.item;
    } catch {
      return null;
    }
  },

  async go(id) {
    const cached = get().ahead[id];
    // a detail fetched ahead may be stale by now (another operator); it shows at once and is refreshed
    const shown = cached ?? (await get().prefetch(id));
    if (!shown) {
      set({ notice: { kind: 'error', text: 'That print could not be loaded.' } });
      return;
    }
    set((s) => ({ item: shown, working: shown.current, rescan: rescanFromItem(shown), rescanOpen: false, picking: false, notice: null, view: { ...s.view, fitted: true } }));
    showInAddressBar(id);
    if (cached) {
      try {
        const fresh = await api<{ item: ItemDetail }>(`/api/items/${id}`);
        if (get().item?.id === id && !get().dirty()) set({ item: fresh.item, working: fresh.item.current });
      } catch {
        /* the cached copy stays; a decision on it is still guarded by its lockVersion */
      }
      set((s) => {
        const { [id]: _used, ...rest } = s.ahead;
        return { ahead: rest };
      });
    }
  },

  async next() {
    const { item, queue } = get();
    if (!item) return;
    const i = queue.findIndex((q) => q.id === item.id);
    const target = queue[i + 1]?.id ?? item.next;
    if (target) await get().go(target);
    else set({ notice: { kind: 'info', text: 'This is the last print of the batch.' } });
  },

  async previous() {
    const { item, queue } = get();
    if (!item) return;
    const i = queue.findIndex((q) => q.id === item.id);
    const target = (i > 0 ? queue[i - 1]?.id : null) ?? item.previous;
    if (target) await get().go(target);
    else set({ notice: { kind: 'info', text: 'This is the first print of the batch.' } });
  },

  async reload() {
    const { item } = get();
    if (!item) return;
    try {
      const res = await api<{ item: ItemDetail }>(`/api/items/${item.id}`);
      set({ item: res.item, working: res.item.current, rescan: rescanFromItem(res.item), notice: { kind: 'info', text: 'Showing the print as it is saved now.' } });
    } catch (err) {
      set({ notice: message(err) });
    }
  },
}));
