/** The list of keyboard shortcuts, opened with ? and closed with Esc. */
import { useEffect, useRef } from 'react';
import { SHORTCUTS } from '../../lib/review/words.ts';
import { EDITING_ACTIONS, useReview } from './store.ts';

export default function HelpOverlay() {
  const open = useReview((s) => s.helpOpen);
  const canDecide = useReview((s) => s.canDecide);
  const close = useRef<HTMLButtonElement>(null);
  useEffect(() => {
    if (open) close.current?.focus();
  }, [open]);
  if (!open) return null;
  return (
    <div className="fixed inset-0 z-40 flex items-center justify-center bg-ink-900/30 p-4" onClick={() => useReview.getState().setHelp(false)}>
      <div role="dialog" aria-modal="true" aria-labelledby="keys-heading" className="card max-h-[90vh] w-full max-w-lg overflow-auto" onClick={(e) => e.stopPropagation()} data-help-overlay>
        <div className="flex items-center justify-between">
          <h2 id="keys-heading">Keys</h2>
          <button ref={close} type="button" className="btn-quiet py-1" onClick={() => useReview.getState().setHelp(false)}>Close</button>
        </div>
        <table className="mt-3 w-full text-sm">
          <tbody>
            {SHORTCUTS.filter((s) => canDecide || !EDITING_ACTIONS.has(s.action)).map((s) => (
              <tr key={s.action} className="border-t border-paper-200">
                <td className="w-32 py-1.5 pr-3"><kbd className="rounded border border-paper-300 px-1 text-[11px] font-normal opacity-80">{s.label}</kbd></td>
                <td className="py-1.5 text-ink-700">{s.words}</td>
              </tr>
            ))}
          </tbody>
        </table>
        <p className="mt-3 text-xs text-ink-500">Keys do nothing while you type in a field, except Esc.</p>
      </div>
    </div>
  );
}
