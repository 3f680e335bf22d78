/**
 * The operator's adjustments: how much correction, the white point (picked on the print), one
 * control per dye layer, black point, contrast and curves, turn and crop, back to the proposal,
 * save as a new version, use on other prints, and the version history. Viewers see which version
 * is current and its history, never controls they cannot use.
 */
import { dyeGain, GAIN_RANGE } from '../../lib/review/adjust.ts';
import { DYE_LAYERS } from '../../lib/review/words.ts';
import { CopyToPrints, FramingControls, ToneControls } from './CorrectionControls.tsx';
import { useReview } from './store.ts';
import { formatWhen, pageTimeZone } from '../../lib/archive/when.ts';

const ORIGIN_WORDS: Record<string, string> = {
  proposed: 'proposed by Drawerlight',
  pooled: 'proposed, shared with the batch',
  operator: 'adjusted',
  restored: 'an earlier version used again',
};

function hex(rgb: readonly number[]): string {
  return `#${rgb.map((v) => Math.round(Math.min(1, Math.max(0, v)) * 255).toString(16).padStart(2, '0')).join('')}`;
}

function time(iso: string): string {
  return formatWhen(iso, pageTimeZone());
}

export default function AdjustPanel() {
  const item = useReview((s) => s.item);
  const working = useReview((s) => s.working);
  const picking = useReview((s) => s.picking);
  const busy = useReview((s) => s.busy);
  const canDecide = useReview((s) => s.canDecide);
  const dirty = useReview((s) => s.dirty());
  const { setStrength, setDyeGain, setPicking, resetToProposed, save } = useReview.getState();
  if (!item || !working) return <section className="card text-sm text-ink-500">No correction to adjust for this print yet.</section>;
  const dyes = item.analysis?.dyes;
  if (!canDecide) return <Versions />;

  return (
    <section className="card space-y-5 p-4" aria-labelledby="adjust-heading" data-adjust-panel>
      <div className="flex items-baseline justify-between">
        <h2 id="adjust-heading" className="text-base">Adjust</h2>
        <span className="text-xs text-ink-500" data-dirty={dirty ? 'yes' : 'no'}>{dirty ? 'Changed, not saved' : `Version ${item.currentVersion ?? '–'}`}</span>
      </div>

      <div>
        <label htmlFor="adj-strength" className="label flex justify-between">
          <span>How much correction</span>
          <span className="font-normal text-ink-500">{Math.round(working.strength * 100)} %</span>
        </label>
        <input
          id="adj-strength"
          type="range"
          min={0}
          max={1}
          step={0.01}
          value={working.strength}
          onChange={(e) => setStrength(Number(e.target.value))}
          className="w-full accent-lamp-600"
          aria-describedby="adj-strength-help"
        />
        <p id="adj-strength-help" className="mt-1 text-xs text-ink-500">0 % leaves the scan as it is. Keys [ and ].</p>
      </div>

      <div>
        <p className="label">White point</p>
        <div className="flex items-center gap-3">
          <span className="inline-block h-8 w-8 rounded border border-paper-300" style={{ background: hex(working.whitePoint) }} aria-hidden="true" data-white-swatch />
          <button type="button" className={picking ? 'btn-primary py-1.5' : 'btn-quiet py-1.5'} aria-pressed={picking} onClick={() => setPicking(!picking)} data-pick-white>
            {picking ? 'Click on the print…' : 'Pick on the print (W)'}
          </button>
        </div>
        <p className="mt-1 text-xs text-ink-500">Click the white border, or something that should be neutral grey or white. The stain there is taken away everywhere.</p>
      </div>

      <fieldset className="space-y-3">
        <legend className="label">Dye layers</legend>
        {DYE_LAYERS.map(({ dye, label }) => {
          const gain = dyeGain(working, dye);
          const measured = dyes?.[dye]?.remainingPercent;
          return (
            <div key={dye}>
              <label htmlFor={`adj-${dye}`} className="flex justify-between text-sm text-ink-700">
                <span>{label}</span>
                <span className="text-ink-500">×{gain.toFixed(2)}{measured !== undefined && ` · measured ${Math.round(measured)} % left`}</span>
              </label>
              <input
                id={`adj-${dye}`}
                type="range"
                min={GAIN_RANGE.min}
                max={GAIN_RANGE.max}
                step={GAIN_RANGE.step}
                value={gain}
                onChange={(e) => setDyeGain(dye, Number(e.target.value))}
                className="w-full accent-lamp-600"
              />
            </div>
          );
        })}
        <p className="text-xs text-ink-500">Each control multiplies what is left of that dye's density: ×1.00 leaves it, ×1.25 brings back a dye kept at 80 %.</p>
      </fieldset>

      <ToneControls />

      <FramingControls />

      <div className="flex flex-wrap gap-2">
        <button type="button" className="btn-quiet" onClick={resetToProposed} disabled={!item.proposed}>Back to the proposal (U)</button>
        <button type="button" className="btn-primary" onClick={() => void save()} disabled={!dirty || busy} data-save-correction>Save as new version (S)</button>
      </div>

      <CopyToPrints />

      <VersionList />
    </section>
  );
}

/** The panel as a viewer sees it: the current version and the history, nothing to change. */
function Versions() {
  const item = useReview((s) => s.item)!;
  return (
    <section className="card space-y-3 p-4" aria-labelledby="versions-heading" data-versions-panel>
      <div className="flex items-baseline justify-between">
        <h2 id="versions-heading" className="text-base">Correction</h2>
        <span className="text-xs text-ink-500">Version {item.currentVersion ?? '–'}</span>
      </div>
      <p className="text-xs text-ink-500">An editor of this archive adjusts the colour; you can suggest a caption, a date and who is in the picture.</p>
      <VersionList />
    </section>
  );
}

function VersionList() {
  const item = useReview((s) => s.item)!;
  const busy = useReview((s) => s.busy);
  const canDecide = useReview((s) => s.canDecide);
  const { restore } = useReview.getState();
  return (
      <details className="text-sm" open={item.corrections.length > 1}>
        <summary className="cursor-pointer font-medium text-ink-700">Versions ({item.corrections.length})</summary>
        <ol className="mt-2 space-y-1" data-versions>
          {[...item.corrections].reverse().map((c) => (
            <li key={c.version} className="flex items-center justify-between gap-2 rounded px-2 py-1 hover:bg-paper-100">
              <span>
                <span className="font-medium">v{c.version}</span> · {ORIGIN_WORDS[c.origin] ?? c.origin}
                <span className="block text-xs text-ink-500">{c.createdBy?.name ?? 'Drawerlight'} · {time(c.createdAt)}{item.renderVersion === c.version ? ' · rendered' : ''}</span>
              </span>
              {c.version === item.currentVersion ? (
                <span className="text-xs text-lamp-700">current</span>
              ) : (
                canDecide && <button type="button" className="btn-quiet px-2 py-1 text-xs" onClick={() => void restore(c.version)} disabled={busy}>Use again</button>
              )}
            </li>
          ))}
        </ol>
      </details>
  );
}
