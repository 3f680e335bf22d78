/**
 * Browser-side pixels of the originals: the whole scan reduced to the preview size, and
 * full-resolution regions for the 1:1 view. The corrected image is never fetched for the
 * preview: it is rendered here from these pixels with the engine's own tables.
 */

/** Long side of the preview the compare view works on. */
export const PREVIEW_SIDE = 2048;

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
