/**
 * Browser-side pixels of the originals: the whole scan reduced to the preview size, and
 * full-resolution regions for the 1:1 view. The corrected image is never fetched for the
 * preview: it is rendered here from these pixels with the engine's own tables.
 */

import { geometryPlan, hasGeometry, identityCorrection, type Correction, type GeometryPlan } from '../../lib/restoration/correction.ts';
import { previewGeometry, uprightRect } from '../../lib/review/adjust.ts';
import { COMPARE_SIDE } from '../../lib/restoration/scan-sizes.ts';

/** Long side of the preview the compare view works on (the server keeps the original's at this size). */
export const PREVIEW_SIDE = COMPARE_SIDE;

/** Decoded original pixels ready to draw and to correct. */
export interface LoadedPixels {
  canvas: HTMLCanvasElement;
  pixels: ImageData;
  width: number;
  height: number;
}

/** Where a print's reduced original is served (immutable: originals are write-once). */
export function previewUrl(itemId: string, side = PREVIEW_SIDE): string {
  return `/api/items/${itemId}/crop?max=${side}`;
}

async function decode(url: string, signal?: AbortSignal): Promise<LoadedPixels> {
  const res = await fetch(url, { credentials: 'same-origin', signal });
  if (!res.ok) throw new Error(`The scan could not be loaded (${res.status}).`);
  const bitmap = await createImageBitmap(await res.blob());
  const canvas = document.createElement('canvas');
  canvas.width = bitmap.width;
  canvas.height = bitmap.height;
  const ctx = canvas.getContext('2d', { willReadFrequently: true })!;
  ctx.drawImage(bitmap, 0, 0);
  bitmap.close();
  return { canvas, pixels: ctx.getImageData(0, 0, canvas.width, canvas.height), width: canvas.width, height: canvas.height };
}

const previews = new Map<string, Promise<LoadedPixels>>();
const KEEP = 4;

/** The reduced original of a print, decoded once and kept for the few prints around the current one. */
export function loadPreview(itemId: string, side = PREVIEW_SIDE): Promise<LoadedPixels> {
  const key = `${itemId}:${side}`;
  let p = previews.get(key);
  if (!p) {
    p = decode(previewUrl(itemId, side));
    p.catch(() => previews.delete(key));
    previews.set(key, p);
    while (previews.size > KEEP) previews.delete(previews.keys().next().value!);
  }
  return p;
}

/** A region of the scan at full resolution, in pixels of the upright scan. */
export interface Region {
  x: number;
  y: number;
  w: number;
  h: number;
}

/** Fetches a full-resolution region of the original for the 1:1 view. */
export function loadRegion(itemId: string, r: Region, signal?: AbortSignal): Promise<LoadedPixels> {
  return decode(`/api/items/${itemId}/crop?x=${r.x}&y=${r.y}&w=${r.w}&h=${r.h}`, signal);
}

/** A canvas the size of `src` for the corrected pixels. */
export function blankLike(src: LoadedPixels): { canvas: HTMLCanvasElement; ctx: CanvasRenderingContext2D; out: ImageData } {
  const canvas = document.createElement('canvas');
  canvas.width = src.width;
  canvas.height = src.height;
  const ctx = canvas.getContext('2d')!;
  return { canvas, ctx, out: ctx.createImageData(src.width, src.height) };
}

/**
 * The original as the correction frames it: turned and cropped by the correction's geometry (the
 * engine's own pixel copy), on a canvas of its own; `src` itself when there is no geometry. The
 * compare view shows both halves framed alike, so the split still lines up.
 */
export function framedCopy(src: LoadedPixels, c: Correction): LoadedPixels {
  if (!hasGeometry(c)) return src;
  const turned = previewGeometry(src.pixels.data, src.width, src.height, c);
  const canvas = document.createElement('canvas');
  canvas.width = turned.width;
  canvas.height = turned.height;
  const ctx = canvas.getContext('2d', { willReadFrequently: true })!;
  const pixels = ctx.createImageData(turned.width, turned.height);
  pixels.data.set(turned.data);
  ctx.putImageData(pixels, 0, 0);
  return { canvas, pixels, width: turned.width, height: turned.height };
}

/** Size of the framed print in pixels of the full-resolution scan (upright size `w` x `h`). */
export function framedSize(w: number, h: number, c: Correction): { w: number; h: number; plan: GeometryPlan } {
  const plan = geometryPlan(c, w, h);
  return { w: plan.width, h: plan.height, plan };
}

/**
 * Fetches the full-resolution original behind a rectangle of the framed print (x, y, w, h in its
 * full-resolution pixels) and turns it as the frame is turned, for the 1:1 view.
 */
export async function loadFramedRegion(itemId: string, r: Region, plan: GeometryPlan, signal?: AbortSignal): Promise<LoadedPixels> {
  const x0 = r.x + plan.left;
  const y0 = r.y + plan.top;
  const upright = uprightRect(plan, x0, y0, x0 + r.w, y0 + r.h);
  const region = await loadRegion(itemId, upright, signal);
  if (plan.quarterTurns === 0) return region;
  return framedCopy(region, { ...identityCorrection(), geometry: { quarterTurns: plan.quarterTurns } });
}
