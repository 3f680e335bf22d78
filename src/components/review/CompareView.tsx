/**
 * Original and corrected print in one frame with a split line the operator drags, or side by
 * side; wheel and pinch zoom and pan move both halves together. Past the preview's resolution
 * a full-resolution region of the original is fetched and corrected here, with the same tables.
 */
import { useCallback, useEffect, useLayoutEffect, useMemo, useRef, useState } from 'react';
import type Konva from 'konva';
import { Group, Image as KImage, Layer, Line, Rect, Stage, Text, Circle } from 'react-konva';
import { renderPreview, samplePatch } from '../../lib/review/adjust.ts';
import { blankLike, framedCopy, framedSize, loadFramedRegion, loadPreview, type LoadedPixels, type Region } from './images.ts';
import { useReview, type ViewTransform } from './store.ts';

const TEAL = '#0d5f59';
const FRAME_BG = '#e8dcc4';
const GAP = 8;
const MAX_SCALE = 8;
const HIRES_DELAY_MS = 250;

interface Corrected {
  canvas: HTMLCanvasElement;
  ctx: CanvasRenderingContext2D;
  out: ImageData;
}

interface HiRes {
  region: Region;
  original: LoadedPixels;
  corrected: Corrected;
}

declare global {
  interface Window {
    /** performance.now() of the last corrected preview on screen (read by the benchmark). */
    __reviewLastPaint?: number;
  }
}

/** Size of the upright scan; the stored size may be unrotated, so the preview's aspect decides. */
function scanSize(width: number | null, height: number | null, preview: LoadedPixels): { w: number; h: number } {
  if (!width || !height) return { w: preview.width, h: preview.height };
  const pa = preview.width / preview.height;
  return Math.abs(width / height - pa) <= Math.abs(height / width - pa) ? { w: width, h: height } : { w: height, h: width };
}

function fit(frameW: number, frameH: number, w: number, h: number): ViewTransform {
  const scale = Math.min(frameW / w, frameH / h) * 0.98;
  return { scale, x: (frameW - w * scale) / 2, y: (frameH - h * scale) / 2, fitted: true };
}

function correctInto(target: Corrected, source: LoadedPixels, working: Parameters<typeof renderPreview>[1]) {
  renderPreview(source.pixels.data, working, target.out.data);
  target.ctx.putImageData(target.out, 0, 0);
}

export default function CompareView() {
  const item = useReview((s) => s.item);
  const working = useReview((s) => s.working);
  const layout = useReview((s) => s.layout);
  const split = useReview((s) => s.split);
  const view = useReview((s) => s.view);
  const holdOriginal = useReview((s) => s.holdOriginal);
  const picking = useReview((s) => s.picking);
  const queue = useReview((s) => s.queue);

  const box = useRef<HTMLDivElement>(null);
  const imageLayer = useRef<Konva.Layer>(null);
  const [size, setSize] = useState({ w: 800, h: 560 });
  const [preview, setPreview] = useState<{ id: string; px: LoadedPixels } | null>(null);
  const [loadError, setLoadError] = useState<string | null>(null);
  const corrected = useRef<Corrected | null>(null);
  const [hires, setHires] = useState<HiRes | null>(null);

  // frame size follows the element
  useEffect(() => {
    const el = box.current;
    if (!el) return;
    const ro = new ResizeObserver(([e]) => setSize({ w: Math.max(200, Math.round(e.contentRect.width)), h: Math.max(200, Math.round(e.contentRect.height)) }));
    ro.observe(el);
    return () => ro.disconnect();
  }, []);

  // the print on screen, then the next one ahead of time so moving on is instant
  useEffect(() => {
    if (!item) return;
    let live = true;
    setLoadError(null);
    loadPreview(item.id)
      .then((px) => {
        if (!live) return;
        corrected.current = blankLike(px);
        setHires(null);
        setPreview({ id: item.id, px });
      })
      .catch((e) => live && setLoadError(String(e.message ?? e)));
    const i = queue.findIndex((q) => q.id === item.id);
    const ahead = queue[i + 1]?.id ?? item.next;
    if (ahead) {
      void loadPreview(ahead).catch(() => undefined);
      void useReview.getState().prefetch(ahead);
    }
    return () => {
      live = false;
    };
  }, [item?.id]);

  const loaded = preview && preview.id === item?.id ? preview.px : null;
  const upright = useMemo(() => (loaded && item ? scanSize(item.width, item.height, loaded) : null), [loaded, item?.width, item?.height]);
  // both halves are framed as the render will be: turned and cropped by the working correction
  const geometryKey = JSON.stringify(working?.geometry ?? null);
  const px = useMemo(() => (loaded && working ? framedCopy(loaded, working) : loaded), [loaded, geometryKey]);
  const framed = useMemo(() => (upright && working ? framedSize(upright.w, upright.h, working) : null), [upright, geometryKey]);
  const scan = useMemo(() => (framed ? { w: framed.w, h: framed.h } : null), [framed]);
  // a new turn or crop is a new frame: fit it again, and fetch its 1:1 regions anew
  useEffect(() => {
    setHires(null);
    useReview.setState((s) => ({ view: { ...s.view, fitted: true } }));
  }, [geometryKey]);
  const frameW = layout === 'split' ? size.w : (size.w - GAP) / 2;

  // keep the automatic fit while the operator has not zoomed
  useEffect(() => {
    if (scan && view.fitted) useReview.setState({ view: fit(frameW, size.h, scan.w, scan.h) });
  }, [scan, frameW, size.h, view.fitted]);

  // live preview: the engine's tables on the browser's pixels, drawn before the browser paints
  useLayoutEffect(() => {
    if (!px || !working) return;
    if (!corrected.current || corrected.current.canvas.width !== px.width || corrected.current.canvas.height !== px.height) corrected.current = blankLike(px);
    correctInto(corrected.current, px, working);
    if (hires) correctInto(hires.corrected, hires.original, working);
    imageLayer.current?.batchDraw();
    requestAnimationFrame(() => {
      window.__reviewLastPaint = performance.now();
    });
  }, [px, working, hires]);

  // 1:1 view: past the preview's own resolution, fetch the visible region at full resolution
  useEffect(() => {
    if (!px || !scan || !item) return;
    const needsMore = view.scale * scan.w > px.width * 1.1;
    if (!needsMore) {
      if (hires) setHires(null);
      return;
    }
    const ctrl = new AbortController();
    const t = setTimeout(async () => {
      const x0 = Math.max(0, Math.floor(-view.x / view.scale));
      const y0 = Math.max(0, Math.floor(-view.y / view.scale));
      const x1 = Math.min(scan.w, Math.ceil((frameW - view.x) / view.scale));
      const y1 = Math.min(scan.h, Math.ceil((size.h - view.y) / view.scale));
      if (x1 <= x0 || y1 <= y0) return;
      const region = { x: x0, y: y0, w: x1 - x0, h: y1 - y0 };
      if (hires && hires.region.x <= x0 && hires.region.y <= y0 && hires.region.x + hires.region.w >= x1 && hires.region.y + hires.region.h >= y1) return;
      try {
        const original = await loadFramedRegion(item.id, region, framed!.plan, ctrl.signal);
        const c = blankLike(original);
        correctInto(c, original, useReview.getState().working!);
        setHires({ region, original, corrected: c });
      } catch {
        /* the reduced preview stays on screen */
      }
    }, HIRES_DELAY_MS);
    return () => {
      clearTimeout(t);
      ctrl.abort();
    };
  }, [view.scale, view.x, view.y, px, framed, frameW, size.h]);

  // pointer handling: split drag, pan, pinch, white-point pick; wheel zoom
  const pointers = useRef(new Map<number, { x: number; y: number }>());
  const gesture = useRef<{ kind: 'split' | 'pan' | 'pinch' | 'pick'; start: { x: number; y: number }; view: ViewTransform; dist?: number; mid?: { x: number; y: number }; moved: boolean } | null>(null);

  const local = useCallback(
    (clientX: number, clientY: number) => {
      const r = box.current!.getBoundingClientRect();
      const x = clientX - r.left;
      const y = clientY - r.top;
      const inRight = layout === 'side' && x > frameW + GAP / 2;
      return { x, y, lx: inRight ? x - frameW - GAP : x };
    },
    [layout, frameW],
  );

  const zoomAt = useCallback((lx: number, ly: number, factor: number, from: ViewTransform) => {
    const min = Math.min(from.scale, 0.05);
    const scale = Math.min(MAX_SCALE, Math.max(min, from.scale * factor));
    const f = scale / from.scale;
    useReview.getState().setView({ scale, x: lx - (lx - from.x) * f, y: ly - (ly - from.y) * f });
  }, []);

  useEffect(() => {
    const el = box.current;
    if (!el) return;
    const onWheel = (e: WheelEvent) => {
      e.preventDefault();
      const p = local(e.clientX, e.clientY);
      zoomAt(p.lx, p.y, Math.exp(-e.deltaY * 0.0015), useReview.getState().view);
    };
    el.addEventListener('wheel', onWheel, { passive: false });
    return () => el.removeEventListener('wheel', onWheel);
  }, [local, zoomAt]);

  const splitPx = Math.round(split * size.w);

  const onPointerDown = (e: React.PointerEvent) => {
    box.current!.setPointerCapture(e.pointerId);
    const p = local(e.clientX, e.clientY);
    pointers.current.set(e.pointerId, { x: p.x, y: p.y });
    const v = useReview.getState().view;
    if (pointers.current.size === 2) {
      const [a, b] = [...pointers.current.values()];
      gesture.current = { kind: 'pinch', start: p, view: v, dist: Math.hypot(a.x - b.x, a.y - b.y), mid: { x: (a.x + b.x) / 2, y: (a.y + b.y) / 2 }, moved: true };
      return;
    }
    const kind = useReview.getState().picking ? 'pick' : layout === 'split' && Math.abs(p.x - splitPx) <= 14 ? 'split' : 'pan';
    gesture.current = { kind, start: p, view: v, moved: false };
  };

  const onPointerMove = (e: React.PointerEvent) => {
    if (!pointers.current.has(e.pointerId)) return;
    const p = local(e.clientX, e.clientY);
    pointers.current.set(e.pointerId, { x: p.x, y: p.y });
    const g = gesture.current;
    if (!g) return;
    if (Math.hypot(p.x - g.start.x, p.y - g.start.y) > 3) g.moved = true;
    if (g.kind === 'split') useReview.getState().setSplit(p.x / size.w);
    else if (g.kind === 'pan' && g.moved) useReview.getState().setView({ x: g.view.x + p.x - g.start.x, y: g.view.y + p.y - g.start.y });
    else if (g.kind === 'pinch' && pointers.current.size === 2) {
      const [a, b] = [...pointers.current.values()];
      const dist = Math.hypot(a.x - b.x, a.y - b.y);
      const mid = g.mid!;
      const lx = layout === 'side' && mid.x > frameW ? mid.x - frameW - GAP : mid.x;
      zoomAt(lx, mid.y, dist / g.dist!, g.view);
    }
  };

  const onPointerUp = (e: React.PointerEvent) => {
    const g = gesture.current;
    pointers.current.delete(e.pointerId);
    if (g?.kind === 'pick' && !g.moved && px && scan) {
      const p = local(e.clientX, e.clientY);
      const v = useReview.getState().view;
      const sx = ((p.lx - v.x) / v.scale) * (px.width / scan.w);
      const sy = ((p.y - v.y) / v.scale) * (px.height / scan.h);
      if (sx >= 0 && sy >= 0 && sx < px.width && sy < px.height) {
        useReview.getState().pickWhitePoint(samplePatch(px.pixels.data, px.width, px.height, sx, sy, Math.max(2, Math.round(px.width / 400))));
      }
    }
    if (pointers.current.size === 0) gesture.current = null;
  };

  const showCorrected = !holdOriginal && !!corrected.current;
  const images = (which: 'original' | 'corrected') =>
    px && scan ? (
      <Group x={view.x} y={view.y} scaleX={view.scale} scaleY={view.scale}>
        <KImage image={which === 'original' ? px.canvas : corrected.current!.canvas} width={scan.w} height={scan.h} />
        {hires && (
          <KImage
            image={which === 'original' ? hires.original.canvas : hires.corrected.canvas}
            x={hires.region.x}
            y={hires.region.y}
            width={hires.region.w}
            height={hires.region.h}
          />
        )}
      </Group>
    ) : null;

  const cursor = picking ? 'crosshair' : layout === 'split' ? 'grab' : 'grab';
  return (
    <div className="relative h-full w-full">
    <div
      ref={box}
      className="relative h-full min-h-[360px] w-full touch-none select-none overflow-hidden rounded-lg border border-paper-300"
      style={{ background: FRAME_BG, cursor }}
      onPointerDown={onPointerDown}
      onPointerMove={onPointerMove}
      onPointerUp={onPointerUp}
      onPointerCancel={onPointerUp}
      data-compare-view
      data-layout={layout}
      data-holding-original={holdOriginal ? 'yes' : 'no'}
      data-hires={hires ? 'yes' : 'no'}
      data-loaded={px ? 'yes' : 'no'}
      data-corrected-box={scan ? [(layout === 'side' ? frameW + GAP : 0) + view.x, view.y, scan.w * view.scale, scan.h * view.scale].map((v) => v.toFixed(2)).join(',') : undefined}
      data-framed-size={scan ? `${scan.w}x${scan.h}` : undefined}
      role="img"
      aria-label={`Print ${item?.seq ?? ''}: original ${layout === 'split' ? 'left of the split line, corrected right of it' : 'on the left, corrected on the right'}${holdOriginal ? ' (showing the whole original)' : ''}`}
    >
      {loadError && <p className="notice-error absolute left-4 top-4 z-10">{loadError}</p>}
      {!px && !loadError && <p className="absolute left-4 top-4 text-sm text-ink-500">Loading the scan…</p>}
      <Stage width={size.w} height={size.h} listening={false}>
        <Layer ref={imageLayer} listening={false} imageSmoothingEnabled>
          {layout === 'split' ? (
            <>
              {images('original')}
              {showCorrected && (
                <Group clipX={splitPx} clipY={0} clipWidth={Math.max(0, size.w - splitPx)} clipHeight={size.h}>
                  {images('corrected')}
                </Group>
              )}
            </>
          ) : (
            <>
              <Group clipX={0} clipY={0} clipWidth={frameW} clipHeight={size.h}>
                {images('original')}
              </Group>
              <Group x={frameW + GAP} clipX={0} clipY={0} clipWidth={frameW} clipHeight={size.h}>
                {images(showCorrected ? 'corrected' : 'original')}
              </Group>
            </>
          )}
        </Layer>
        <Layer listening={false} name="guides">
          {layout === 'split' ? (
            <>
              {!holdOriginal && (
                <>
                  <Line name="split-line" points={[splitPx, 0, splitPx, size.h]} stroke={TEAL} strokeWidth={2} />
                  <Circle x={splitPx} y={size.h / 2} radius={13} fill="#ffffff" stroke={TEAL} strokeWidth={2} />
                  <Line points={[splitPx - 5, size.h / 2 - 5, splitPx - 9, size.h / 2, splitPx - 5, size.h / 2 + 5]} stroke={TEAL} strokeWidth={2} />
                  <Line points={[splitPx + 5, size.h / 2 - 5, splitPx + 9, size.h / 2, splitPx + 5, size.h / 2 + 5]} stroke={TEAL} strokeWidth={2} />
                </>
              )}
              <Label x={10} text="Original" />
              {!holdOriginal && <Label x={size.w - 90} text="Corrected" />}
              {holdOriginal && <Label x={size.w - 150} text="Whole original" />}
            </>
          ) : (
            <>
              <Rect x={frameW} y={0} width={GAP} height={size.h} fill="#fbf8f2" />
              <Label x={10} text="Original" />
              <Label x={frameW + GAP + 10} text={showCorrected ? 'Corrected' : 'Original (held)'} />
            </>
          )}
        </Layer>
      </Stage>
    </div>
      {layout === 'split' && !holdOriginal && (
        // the split line from the keyboard: arrows move it by 1 %, Page Up and Page Down by 10 %, Home and End to the edges
        <label className="absolute bottom-3 left-1/2 flex -translate-x-1/2 items-center gap-2 rounded-md bg-paper-50/90 px-3 py-1.5 text-xs text-ink-700 shadow-sm">
          <span aria-hidden="true">Split</span>
          <input
            type="range"
            min={0}
            max={100}
            step={1}
            value={Math.round(split * 100)}
            onChange={(e) => useReview.getState().setSplit(Number(e.target.value) / 100)}
            onPointerDown={(e) => e.stopPropagation()}
            aria-label="Split line position"
            aria-valuetext={`Original on the left ${Math.round(split * 100)} %, corrected on the right ${100 - Math.round(split * 100)} %`}
            className="w-40 accent-lamp-600"
            data-split-slider
          />
        </label>
      )}
    </div>
  );
}

function Label({ x, text }: { x: number; text: string }) {
  return (
    <Group x={x} y={10}>
      <Rect width={text.length * 7.2 + 16} height={22} cornerRadius={4} fill="rgba(251,248,242,0.88)" />
      <Text x={8} y={5} text={text} fontSize={12} fontFamily="Inter, system-ui, sans-serif" fill="#3a3732" />
    </Group>
  );
}
