/**
 * The adjust panel's tone and framing controls (black point, overall contrast, a curve per
 * channel, quarter turns and crop) and the choice of prints of the batch to use the saved
 * correction on. Every control edits the working correction, which the compare view previews
 * with the engine's own code and the server renders.
 */
import { useMemo, useState } from 'react';
import type { ChannelName } from '../../lib/restoration/correction.ts';
import {
  BLACK_RANGE,
  blackLevel,
  CONTRAST_RANGE,
  contrastOf,
  curveAt,
  CURVE_INPUTS,
  MAX_TRIM,
  quarterTurnsOf,
  trimOf,
  withBlackLevel,
  withContrast,
  withCurvePoint,
  withoutGeometry,
  withStraightCurve,
  withTrim,
  withTurn,
  type Trim,
} from '../../lib/review/adjust.ts';
import { useReview } from './store.ts';

const CHANNEL_WORDS: { ch: ChannelName; label: string; colour: string }[] = [
  { ch: 'red', label: 'Red', colour: '#b3261e' },
  { ch: 'green', label: 'Green', colour: '#2e7d32' },
  { ch: 'blue', label: 'Blue', colour: '#1f4fa8' },
];
const POINT_WORDS = ['Shadows', 'Middle tones', 'Highlights'];
const TRIM_WORDS: { edge: keyof Trim; label: string }[] = [
  { edge: 'top', label: 'Top' },
  { edge: 'bottom', label: 'Bottom' },
  { edge: 'left', label: 'Left' },
  { edge: 'right', label: 'Right' },
];

/** Black point, overall contrast and the curves. */
export function ToneControls() {
  const working = useReview((s) => s.working);
  const [channel, setChannel] = useState<ChannelName>('red');
  const { adjust } = useReview.getState();
  const paths = useMemo(() => {
    if (!working) return [];
    return CHANNEL_WORDS.map(({ ch, colour }) => {
      const pts: string[] = [];
      for (let i = 0; i <= 32; i++) {
        const x = i / 32;
        pts.push(`${(x * 100).toFixed(1)},${(100 - curveAt(working, ch, x) * 100).toFixed(1)}`);
      }
      return { ch, colour, d: `M${pts.join(' L')}` };
    });
  }, [working?.toneCurves]);
  if (!working) return null;
  const black = blackLevel(working);
  const contrast = contrastOf(working);

  return (
    <>
      <div>
        <label htmlFor="adj-black" className="label flex justify-between">
          <span>Black point</span>
          <span className="font-normal text-ink-500">{Math.round(black * 100)} %</span>
        </label>
        <input id="adj-black" type="range" min={BLACK_RANGE.min} max={BLACK_RANGE.max} step={BLACK_RANGE.step} value={black} onChange={(e) => adjust((c) => withBlackLevel(c, Number(e.target.value)))} className="w-full accent-lamp-600" aria-describedby="adj-black-help" />
        <p id="adj-black-help" className="mt-1 text-xs text-ink-500">Raise it until the deepest shadows are black again instead of a lifted grey.</p>
      </div>

      <div>
        <label htmlFor="adj-contrast" className="label flex justify-between">
          <span>Contrast, all three dyes</span>
          <span className="font-normal text-ink-500">×{contrast.toFixed(2)}</span>
        </label>
        <input id="adj-contrast" type="range" min={CONTRAST_RANGE.min} max={CONTRAST_RANGE.max} step={CONTRAST_RANGE.step} value={contrast} onChange={(e) => adjust((c) => withContrast(c, Number(e.target.value)))} className="w-full accent-lamp-600" aria-describedby="adj-contrast-help" />
        <p id="adj-contrast-help" className="mt-1 text-xs text-ink-500">Multiplies the density of every dye together: the paper stays as it is, the darks go deeper.</p>
      </div>

      <fieldset className="space-y-2" data-curve-controls>
        <legend className="label">Channel curves</legend>
        <div className="flex items-start gap-3">
          <svg viewBox="-2 -2 104 104" className="h-24 w-24 shrink-0 rounded border border-paper-300 bg-paper-50" aria-hidden="true">
            <path d="M0,100 L100,0" stroke="#cfc6b4" strokeWidth="0.8" fill="none" />
            {paths.map((p) => (
              <path key={p.ch} d={p.d} stroke={p.colour} strokeWidth={p.ch === channel ? 2.2 : 1} opacity={p.ch === channel ? 1 : 0.45} fill="none" />
            ))}
            {CURVE_INPUTS.map((x) => (
              <circle key={x} cx={x * 100} cy={100 - curveAt(working, channel, x) * 100} r="3" fill="#ffffff" stroke={CHANNEL_WORDS.find((c) => c.ch === channel)!.colour} strokeWidth="1.5" />
            ))}
          </svg>
          <div className="flex flex-col gap-1" role="radiogroup" aria-label="Channel of the curve">
            {CHANNEL_WORDS.map(({ ch, label }) => (
              <label key={ch} className="flex items-center gap-1.5 text-sm text-ink-700">
                <input type="radio" name="curve-channel" value={ch} checked={channel === ch} onChange={() => setChannel(ch)} className="accent-lamp-600" />
                {label}{working.toneCurves?.[ch] ? ' ·' : ''}
              </label>
            ))}
            <button type="button" className="btn-quiet mt-1 px-2 py-1 text-xs" onClick={() => adjust((c) => withStraightCurve(c, channel))} disabled={!working.toneCurves?.[channel]}>
              Straighten
            </button>
          </div>
        </div>
        {CURVE_INPUTS.map((x, k) => {
          const y = curveAt(working, channel, x);
          return (
            <div key={x}>
              <label htmlFor={`adj-curve-${k}`} className="flex justify-between text-sm text-ink-700">
                <span>{POINT_WORDS[k]} ({Math.round(x * 100)} % in)</span>
                <span className="text-ink-500">{Math.round(y * 100)} % out</span>
              </label>
              <input id={`adj-curve-${k}`} type="range" min={0} max={1} step={0.005} value={y} onChange={(e) => adjust((c) => withCurvePoint(c, channel, x, Number(e.target.value)))} className="w-full accent-lamp-600" data-curve-point={k} />
            </div>
          );
        })}
        <p className="text-xs text-ink-500">Each curve bends one channel after the dye correction; a point stays between its neighbours, so no tone turns over.</p>
      </fieldset>
    </>
  );
}

/** Quarter turns and the crop of the render; the original scan is never changed. */
export function FramingControls() {
  const working = useReview((s) => s.working);
  const { adjust } = useReview.getState();
  if (!working) return null;
  const turns = quarterTurnsOf(working);
  const trim = trimOf(working);
  return (
    <fieldset className="space-y-2" data-framing-controls>
      <legend className="label">Turn and crop</legend>
      <div className="flex flex-wrap items-center gap-2">
        <button type="button" className="btn-quiet px-2 py-1 text-sm" onClick={() => adjust((c) => withTurn(c, -1))} data-turn="left">↺ Turn left</button>
        <button type="button" className="btn-quiet px-2 py-1 text-sm" onClick={() => adjust((c) => withTurn(c, 1))} data-turn="right">↻ Turn right</button>
        <span className="text-xs text-ink-500" data-turns={turns}>{turns === 0 ? 'As scanned' : `Turned ${turns * 90}° clockwise`}</span>
      </div>
      <div className="grid grid-cols-2 gap-2">
        {TRIM_WORDS.map(({ edge, label }) => (
          <label key={edge} className="flex items-center justify-between gap-2 text-sm text-ink-700">
            <span>{label}</span>
            <span className="flex items-center gap-1">
              <input
                type="number"
                min={0}
                max={MAX_TRIM * 100}
                step={0.5}
                value={Math.round(trim[edge] * 1000) / 10}
                onChange={(e) => adjust((c) => withTrim(c, edge, Number(e.target.value) / 100))}
                className="w-16 rounded border border-paper-300 bg-white px-1.5 py-0.5 text-right text-sm"
                aria-label={`Trim from the ${label.toLowerCase()} edge, percent`}
                data-trim={edge}
              />
              <span className="text-xs text-ink-500">%</span>
            </span>
          </label>
        ))}
      </div>
      <div className="flex items-center justify-between gap-2">
        <p className="text-xs text-ink-500">Trim the scanner background from each edge of the turned print. The original scan is kept as it is.</p>
        <button type="button" className="btn-quiet shrink-0 px-2 py-1 text-xs" onClick={() => adjust(withoutGeometry)} disabled={!working.geometry}>As scanned</button>
      </div>
    </fieldset>
  );
}

/** Choose prints of the batch and give each the saved correction of the print on screen. */
export function CopyToPrints() {
  const item = useReview((s) => s.item);
  const queue = useReview((s) => s.queue);
  const busy = useReview((s) => s.busy);
  const dirty = useReview((s) => s.dirty());
  const [chosen, setChosen] = useState<Set<string>>(new Set());
  const [withGeometry, setWithGeometry] = useState(false);
  if (!item) return null;
  const others = queue.filter((q) => q.id !== item.id && q.state === 'ready');
  if (others.length === 0) return null;
  const toggle = (id: string) => setChosen((s) => {
    const next = new Set(s);
    if (next.has(id)) next.delete(id);
    else next.add(id);
    return next;
  });
  const picked = others.filter((q) => chosen.has(q.id)).map((q) => q.id);
  const go = async () => {
    if (await useReview.getState().copyTo(picked, withGeometry)) setChosen(new Set());
  };
  return (
    <details className="text-sm" data-copy-to-prints>
      <summary className="cursor-pointer font-medium text-ink-700">Use on other prints of this batch</summary>
      <div className="mt-2 space-y-2">
        <p className="text-xs text-ink-500">Choose the prints that were faded alike (same box, same paper). Each gets this print's saved correction as a new version of its own.</p>
        <div className="flex gap-2 text-xs">
          <button type="button" className="btn-quiet px-2 py-0.5 text-xs" onClick={() => setChosen(new Set(others.filter((q) => !q.decision).map((q) => q.id)))}>Choose those not reviewed</button>
          <button type="button" className="btn-quiet px-2 py-0.5 text-xs" onClick={() => setChosen(new Set())} disabled={picked.length === 0}>Choose none</button>
        </div>
        <ul className="max-h-56 space-y-0.5 overflow-y-auto rounded border border-paper-300 p-1" aria-label="Prints of this batch">
          {others.map((q) => (
            <li key={q.id}>
              <label className="flex items-center gap-2 rounded px-1.5 py-1 hover:bg-paper-100">
                <input type="checkbox" checked={chosen.has(q.id)} onChange={() => toggle(q.id)} className="accent-lamp-600" data-copy-target={q.seq} />
                <img src={`/api/items/${q.id}/thumbnail?of=original`} alt="" loading="lazy" className="h-8 w-8 rounded object-cover" />
                <span>Print {q.seq}</span>
                {q.decision && <span className="ml-auto text-xs text-ink-500">decided</span>}
              </label>
            </li>
          ))}
        </ul>
        <label className="flex items-center gap-2 text-sm text-ink-700">
          <input type="checkbox" checked={withGeometry} onChange={(e) => setWithGeometry(e.target.checked)} className="accent-lamp-600" data-copy-geometry />
          Also the turn and crop (otherwise each print keeps its own)
        </label>
        <button type="button" className="btn-primary" onClick={() => void go()} disabled={busy || picked.length === 0 || dirty} data-copy-apply>
          {dirty ? 'Save first, then use on others' : picked.length === 0 ? 'Choose prints first' : `Use on ${picked.length} print${picked.length === 1 ? '' : 's'}`}
        </button>
      </div>
    </details>
  );
}
