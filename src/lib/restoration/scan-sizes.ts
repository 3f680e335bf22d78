/**
 * Sizes and limits of scans that the web server, the jobs and the browser share, kept apart from
 * the image module (imaging.ts) so that reading one of them loads no image library.
 */

/** Default refusal limits: 150 megapixels covers an 8x10 in print at 1200 dpi; 500 MB any sane file. */
export const DEFAULT_LIMITS = { maxPixels: 150_000_000, maxBytes: 500 * 1024 * 1024 };

export type ScanFormat = 'jpeg' | 'png' | 'tiff';

/** Long side of the reduced original the review's compare view works on (fetched whole, corrected in the browser). */
export const COMPARE_SIDE = 2048;

/** Longest side of the reduced copy the analysis measures and the previews show. */
export const ANALYSIS_SIDE = 1280;
/** Shortest long side of that copy where a JPEG's shrink-on-load leaves a choice (see {@link reviewCopySide}). */
export const ANALYSIS_MIN_SIDE = 900;

/**
 * Long side of the reduced copy of a scan that the analysis measures and the previews show.
 * A JPEG decodes at 1/4 or 1/8 of its size for a fraction of a full decode (libjpeg's scaled DCT;
 * measured here on 3600 x 2400 scans: 23 ms at 1/4 against 32 ms whole; at 1/2 it was no cheaper,
 * 42 ms, its scaled transform having no SIMD code; tests/bench/engine.ts prints the costs). For a
 * JPEG it is the smallest of the 1/8, 1/4 and 1/2 sizes that keeps ANALYSIS_MIN_SIDE, reduced
 * further to ANALYSIS_SIDE when larger: 900 px for a 6x4 in print
 * at 600 dpi (3600 px, 1/4) or 1200 dpi (7200 px, 1/8), 1200 px at 400 dpi (2400 px, 1/2), 1250 px
 * for a 5000 px scan (1/4). Other formats decode whole anyway: ANALYSIS_SIDE.
 * Never larger than the scan.
 */
export function reviewCopySide(longSide: number, format: ScanFormat): number {
  if (longSide <= ANALYSIS_MIN_SIDE) return longSide;
  if (format === 'jpeg') {
    for (const shrink of [8, 4, 2]) {
      const side = Math.ceil(longSide / shrink);
      if (side >= ANALYSIS_MIN_SIDE) return Math.min(side, ANALYSIS_SIDE);
    }
  }
  return Math.min(longSide, ANALYSIS_SIDE);
}
