/**
 * The print review view: compare view, adjustments and decisions for one print at a time,
 * driven mostly from the keyboard (the keys are listed in the help overlay, opened with ?).
 */
import { useEffect, useRef } from 'react';
import type { ItemDetail } from '../../lib/review/types.ts';
import { GRADE_WORDS, SHORTCUTS, type FadeGradeName, type ShortcutAction } from '../../lib/review/words.ts';
import AdjustPanel from './AdjustPanel.tsx';
import CompareView from './CompareView.tsx';
import DecisionBar from './DecisionBar.tsx';
import HelpOverlay from './HelpOverlay.tsx';
import { EDITING_ACTIONS, useReview, type QueueEntry } from './store.ts';
import { backPictureUrl } from '../../lib/backs/types.ts';

interface Props {
  item: ItemDetail;
  queue: QueueEntry[];
  canDecide: boolean;
}

const KEY_ACTIONS = new Map<string, ShortcutAction>(SHORTCUTS.map((s) => [s.key, s.action]));

function typing(target: EventTarget | null): boolean {
  const el = target as HTMLElement | null;
  if (!el) return false;
  return el.isContentEditable || el.tagName === 'INPUT' || el.tagName === 'TEXTAREA' || el.tagName === 'SELECT';
}

function run(action: ShortcutAction) {
  const s = useReview.getState();
  if (!s.canDecide && EDITING_ACTIONS.has(action)) return;
  switch (action) {
    case 'accept': return void s.decide('accepted');
    case 'acceptAdjusted': return void s.decide('accepted_adjusted');
    case 'rescan': return s.canDecide ? s.setRescanOpen(true) : void s.decide('rescan');
    case 'skip': return void s.decide('skipped');
    case 'next': return void s.next();
    case 'previous': return void s.previous();
    case 'toggleLayout': return s.setLayout(s.layout === 'split' ? 'side' : 'split');
    case 'pickWhite': return s.setPicking(!s.picking);
    case 'strengthDown': return s.nudgeStrength(-0.05);
    case 'strengthUp': return s.nudgeStrength(0.05);
    case 'reset': return s.resetToProposed();
    case 'save': return void s.save();
    case 'fit': return s.setLayout(s.layout);
    case 'actualSize': {
      const v = s.view;
      // zoom to one scan pixel per screen pixel around the middle of the current view
      const frame = document.querySelector('[data-compare-view]')?.getBoundingClientRect();
      const cx = (frame?.width ?? 800) / (s.layout === 'split' ? 2 : 4);
      const cy = (frame?.height ?? 600) / 2;
      return s.setView({ scale: 1, x: cx - ((cx - v.x) / v.scale), y: cy - ((cy - v.y) / v.scale) });
    }
    case 'help': return s.setHelp(!s.helpOpen);
    case 'close':
      if (s.helpOpen) return s.setHelp(false);
      if (s.rescanOpen) return s.setRescanOpen(false);
      if (s.picking) return s.setPicking(false);
      return s.setNotice(null);
    case 'holdOriginal': return s.setHoldOriginal(true);
  }
}

export default function ReviewWorkbench({ item: initial, queue: initialQueue, canDecide }: Props) {
  // the island runs in the browser only (client:only), so the page's store is filled before the first render
  const started = useRef(false);
  if (!started.current) {
    started.current = true;
    useReview.getState().init(initial, initialQueue, canDecide);
  }
  const item = useReview((s) => s.item);
  const queue = useReview((s) => s.queue);
  const notice = useReview((s) => s.notice);
  const layout = useReview((s) => s.layout);
  const holdOriginal = useReview((s) => s.holdOriginal);

  useEffect(() => {
    const down = (e: KeyboardEvent) => {
      if (e.ctrlKey || e.metaKey || e.altKey) return;
      if (e.key === 'Escape') {
        run('close');
        return;
      }
      if (typing(e.target)) return;
      const action = KEY_ACTIONS.get(e.key.length === 1 ? e.key.toLowerCase() : e.key) ?? (e.key === '?' ? 'help' : undefined);
      if (!action) return;
      if (useReview.getState().helpOpen && action !== 'help') return;
      e.preventDefault();
      if (action === 'holdOriginal' && e.repeat) return;
      run(action);
    };
    const up = (e: KeyboardEvent) => {
      if (e.key === ' ') useReview.getState().setHoldOriginal(false);
    };
    const blur = () => useReview.getState().setHoldOriginal(false);
    window.addEventListener('keydown', down);
    window.addEventListener('keyup', up);
    window.addEventListener('blur', blur);
    return () => {
      window.removeEventListener('keydown', down);
      window.removeEventListener('keyup', up);
      window.removeEventListener('blur', blur);
    };
  }, []);

  const shown = item ?? initial;
  const position = queue.findIndex((q) => q.id === shown.id);
  const reviewed = queue.filter((q) => q.decision).length;
  const grade = shown.fadeGrade as FadeGradeName | null;
  const pooledResult = (shown.analysis as { pooledResult?: { expectedDeltaE00?: number; yellowingGrade?: FadeGradeName } } | null)?.pooledResult;
  const yellowing = pooledResult?.yellowingGrade ?? shown.analysis?.yellowingGrade;
  const pooledExpected = pooledResult?.expectedDeltaE00;
  const expected = pooledExpected ?? shown.analysis?.expectedDeltaE00;

  return (
    <div className="space-y-4" data-review-workbench data-item-id={shown.id} data-lock-version={shown.lockVersion}>
      <div className="flex flex-wrap items-center gap-x-4 gap-y-1">
        <a href={`/batches/${shown.batchId}`} className="text-sm text-lamp-700 underline-offset-2 hover:underline">← {shown.batchName || 'Batch'}</a>
        <h1 className="text-xl">Print {shown.seq} <span className="font-normal text-ink-500">· {shown.originalName}</span></h1>
        {grade && <span className="rounded-full bg-paper-100 px-2.5 py-0.5 text-xs font-medium text-ink-700" data-grade={grade}>Fading: {GRADE_WORDS[grade] ?? grade}</span>}
        {yellowing && yellowing !== 'none' && (
          <span className="rounded-full bg-paper-100 px-2.5 py-0.5 text-xs font-medium text-ink-700" data-yellowing-grade={yellowing}>
            Paper yellowing: {GRADE_WORDS[yellowing] ?? yellowing}
          </span>
        )}
        {shown.analysis?.rescanAdvised && <span className="rounded-full bg-warn-100 px-2.5 py-0.5 text-xs font-medium text-warn-700">Negative would help</span>}
        {typeof expected === 'number' && (
          <span
            className={`rounded-full px-2.5 py-0.5 text-xs font-medium ${expected >= 5 ? 'bg-warn-100 text-warn-700' : 'bg-paper-100 text-ink-700'}`}
            data-expected-error={expected}
            title="How far the engine expects its proposal to be from the print as it was, from its own uncertainty (CIEDE2000)"
          >
            {expected >= 5 ? 'Engine unsure: check by eye' : 'Engine fairly sure'} (±{expected.toFixed(1)} ΔE00)
          </span>
        )}
        <span className="ml-auto text-sm text-ink-500">{position >= 0 ? `${position + 1} of ${queue.length}` : ''} · {reviewed} decided</span>
        <button type="button" className="btn-quiet py-1 text-xs" onClick={() => run('help')} aria-haspopup="dialog">Keys (?)</button>
      </div>

      <div aria-live="polite" className="min-h-[2.5rem]">
        {notice && (
          <div className={notice.kind === 'info' ? 'notice' : notice.kind === 'conflict' ? 'notice-caution' : 'notice-error'} role={notice.kind === 'info' ? 'status' : 'alert'} data-notice={notice.kind}>
            {notice.text}
            {notice.kind === 'conflict' && (
              <button type="button" className="btn-quiet ml-3 py-1 text-xs" onClick={() => void useReview.getState().reload()}>Show it as saved now</button>
            )}
          </div>
        )}
      </div>

      <div className="grid grid-cols-[minmax(0,1fr)] gap-4 lg:grid-cols-[minmax(0,1fr)_20rem]">
        <div className="min-w-0 space-y-2">
          <div className="h-[62vh]">
            <CompareView />
          </div>
          <div className="flex flex-wrap items-center gap-2 text-sm">
            <button type="button" className="btn-quiet py-1" onClick={() => run('toggleLayout')} aria-pressed={layout === 'side'} data-toggle-layout>
              {layout === 'split' ? 'Side by side (V)' : 'One frame with a split (V)'}
            </button>
            <button type="button" className="btn-quiet py-1" onClick={() => run('fit')}>Fit (0)</button>
            <button type="button" className="btn-quiet py-1" onClick={() => run('actualSize')}>Full size (1)</button>
            <button
              type="button"
              className="btn-quiet py-1"
              aria-pressed={holdOriginal}
              onPointerDown={() => useReview.getState().setHoldOriginal(true)}
              onPointerUp={() => useReview.getState().setHoldOriginal(false)}
              onPointerLeave={() => useReview.getState().setHoldOriginal(false)}
            >
              Hold for the original (Space)
            </button>
            <span className="ml-auto flex gap-2">
              <button type="button" className="btn-quiet py-1" onClick={() => run('previous')}>← Previous</button>
              <button type="button" className="btn-quiet py-1" onClick={() => run('next')}>Next →</button>
            </span>
          </div>
          <DecisionBar />
        </div>
        <div className="min-w-0 space-y-4">
          <AdjustPanel />
          {shown.back && (
            <figure className="card p-3" data-print-back>
              <img src={backPictureUrl(shown.back, 'preview')} alt={`Back of print ${shown.seq}`} className="w-full rounded border border-paper-200" />
              <figcaption className="mt-1 text-xs text-ink-500">The back of the print, as scanned ({shown.back.originalName})</figcaption>
            </figure>
          )}
        </div>
      </div>
      <HelpOverlay />
    </div>
  );
}
