/**
 * Recognising the scan of a print's back: mostly bare photographic paper (one even, nearly neutral
 * tone, often cream with age) with sparse marks on it (a lab's imprint, a stamp, a line of
 * handwriting), or nothing at all. A photograph spreads its pixels over many tones and colours. Pure
 * (interleaved 8-bit RGB in, a verdict out), so the worker and the browser judge alike; the worker
 * runs it on the reduced copy it decodes for the analysis, so a back is never corrected as a picture.
 */

/** The measurements behind a verdict, each 0..1 unless said. */
export interface BackMeasure {
  /** True when the scan looks like the back of a print. */
  back: boolean;
  /** Share of pixels within PAPER_SPREAD of the paper's tone. */
  paperShare: number;
  /** Share of pixels clearly darker than the paper: the marks. */
  markShare: number;
  /** The paper's luminance, 0..255 (the median of the scan). */
  paperLevel: number;
  /** Mean distance of the paper's pixels from neutral, 0..255 (a cream back is a little warm). */
  paperChroma: number;
  /** Mean distance from neutral of the marked pixels (a coloured stamp is fine; a picture is far). */
  markChroma: number;
}

/**
 * Limits of a back, our own choices, checked on the generated backs and scenes of the tests: bare
 * paper is light, one tone (its texture and the scanner's noise stay within PAPER_SPREAD levels), at
 * most as warm as a deeply yellowed base (a blue-channel stain of about 0.3 density), and covers
 * nearly all of the sheet; marks cover little.
 */
const PAPER_SPREAD = 14;
const MIN_PAPER_LEVEL = 150;
const MIN_PAPER_SHARE = 0.8;
const MAX_MARK_SHARE = 0.15;
const MAX_PAPER_CHROMA = 72;
/** How much darker than the paper a pixel must be to count as a mark. */
const MARK_DEPTH = 40;

const luma = (r: number, g: number, b: number) => 0.2126 * r + 0.7152 * g + 0.0722 * b;
const chroma = (r: number, g: number, b: number) => Math.max(r, g, b) - Math.min(r, g, b);

/**
 * Measures whether `rgb` (width × height pixels, `channels` values each, the first three red, green,
 * blue) is the back of a print. `step` samples every n-th pixel of a large image.
 */
export function measureBack(rgb: Uint8Array | Uint8ClampedArray, width: number, height: number, channels = 3, step = 1): BackMeasure {
  const histogram = new Uint32Array(256);
  let n = 0;
  for (let i = 0; i < width * height; i += step) {
    const o = i * channels;
    histogram[Math.round(luma(rgb[o], rgb[o + 1], rgb[o + 2]))]++;
    n++;
  }
  let seen = 0;
  let paperLevel = 0;
  while (paperLevel < 255 && seen + histogram[paperLevel] < n / 2) seen += histogram[paperLevel++];

  let paper = 0;
  let marks = 0;
  let paperChroma = 0;
  let markChroma = 0;
  for (let i = 0; i < width * height; i += step) {
    const o = i * channels;
    const r = rgb[o];
    const g = rgb[o + 1];
    const b = rgb[o + 2];
    const y = luma(r, g, b);
    if (Math.abs(y - paperLevel) <= PAPER_SPREAD) {
      paper++;
      paperChroma += chroma(r, g, b);
    } else if (y < paperLevel - MARK_DEPTH) {
      marks++;
      markChroma += chroma(r, g, b);
    }
  }
  const paperShare = n ? paper / n : 0;
  const markShare = n ? marks / n : 0;
  const m: BackMeasure = {
    back: false,
    paperShare,
    markShare,
    paperLevel,
    paperChroma: paper ? paperChroma / paper : 0,
    markChroma: marks ? markChroma / marks : 0,
  };
  m.back = paperLevel >= MIN_PAPER_LEVEL && paperShare >= MIN_PAPER_SHARE && markShare <= MAX_MARK_SHARE && m.paperChroma <= MAX_PAPER_CHROMA;
  return m;
}
