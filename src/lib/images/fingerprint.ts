/**
 * A perceptual fingerprint of a scan, so that two scans of the same picture can be found: the same
 * print fed twice, a second print from the same negative, or the rescan from the negative that
 * should replace a faded print. It must hold when one of the two has faded or taken a colour cast,
 * went through JPEG, or was cropped a few percent differently, and differ between pictures.
 *
 * How: a white paper border, when the scan has one, is left out, and the picture inside is
 * averaged down to a 32 x 32 grey copy; its values are replaced by their ranks, so any tone curve
 * that keeps the order of greys (fading's loss of contrast, a stain's lift of the whites, exposure,
 * scanner gamma) leaves it unchanged; the copy's two-dimensional DCT-II is taken and each of the 128
 * lowest-frequency coefficients (DC left out) gives one bit: above or below their median. Similar
 * pictures have similar coarse structure, so they differ in few bits (Hamming distance). The DCT
 * hash of a grey copy follows C. Zauner, "Implementation and Benchmarking of Perceptual Image Hash
 * Functions", Upper Austria University of Applied Sciences, 2010; the rank normalisation and the
 * border removal are our own additions for faded prints. tests/bench/duplicates.ts measures it.
 *
 * Pure code on decoded pixels (the analysis's reduced copy will do): no image library is loaded.
 */

/** Decoded pixels, interleaved, 1 to 4 channels (the first three read as sRGB red, green, blue), 8 bits unless `depth` says 16. */
export interface FingerprintPixels {
  data: Uint8Array | Uint8ClampedArray | Uint16Array;
  width: number;
  height: number;
  channels: number;
  depth?: 8 | 16;
}

/** Side of the grey copy the DCT is taken of. */
const GRID = 32;
/** Smallest side a scan's fingerprint is made from (less any border, the 32 x 32 grey copy still needs a pixel a cell). */
const MIN_SIDE = 64;
/** Long side of the working grey copy. */
const WORKING_SIDE = 256;
/** Most of a side that may be taken for paper border. */
const BORDER_LIMIT = 0.12;
/** A line is paper when its mean grey code is above this and its standard deviation below PAPER_MAX_SPREAD (8-bit codes). */
const PAPER_MIN_GREY = 150;
const PAPER_MAX_SPREAD = 12;
/** Highest u + v of the DCT coefficients taken (the first 128 by frequency lie within it). */
const MAX_FREQUENCY = 15;
/** Bits of a fingerprint. */
export const FINGERPRINT_BITS = 128;

/**
 * Two fingerprints at most this many bits apart (of 128) are taken for the same picture. Chosen from
 * `npm run bench:duplicates` (faded print scans against clean rescans cropped 1-5 % per side with
 * another exposure, among 500 unrelated scans): there 95 % of the rescans found their print and no
 * scan was shown a wrong one; at 40 the first false matches appear and no more rescans are found,
 * and the three missed (two rescans of a night launch, mostly black, and one of a beach) lie 46-50
 * bits from their print. Pictures that have nothing in common differ in about 64 bits. Distances
 * are even: each fingerprint has as many bits set as clear.
 */
export const SAME_PICTURE_DISTANCE = 38;

/** The 128 lowest-frequency DCT coefficients but the DC term, by (u + v) then u: (0,1), (1,0), (0,2), … */
const COEFFICIENTS: Array<[number, number]> = (() => {
  const all: Array<[number, number]> = [];
  for (let u = 0; u < GRID; u++) for (let v = 0; v < GRID; v++) if (u + v > 0 && u + v <= MAX_FREQUENCY) all.push([u, v]);
  all.sort((a, b) => a[0] + a[1] - (b[0] + b[1]) || a[0] - b[0]);
  return all.slice(0, FINGERPRINT_BITS);
})();

/** cos((2x + 1) u π / 2N) for the frequencies used, each row of GRID values. */
const COSINES: Float64Array[] = Array.from({ length: MAX_FREQUENCY + 1 }, (_, u) => Float64Array.from({ length: GRID }, (_, x) => Math.cos(((2 * x + 1) * u * Math.PI) / (2 * GRID))));

/**
 * The fingerprint of decoded pixels: 128 bits as 32 hexadecimal digits.
 * @throws {RangeError} for pixels too small to reduce to the grey copy, or a data length that does not match.
 */
export function fingerprint(pixels: FingerprintPixels): string {
  const grey = greyCopy(pixels);
  const ranked = ranks(grey);
  const coeffs = new Float64Array(COEFFICIENTS.length);
  // separable DCT-II: rows first for the few horizontal frequencies needed, then columns
  const rowPass = new Float64Array((MAX_FREQUENCY + 1) * GRID);
  for (let v = 0; v <= MAX_FREQUENCY; v++) {
    const cv = COSINES[v];
    for (let y = 0; y < GRID; y++) {
      let s = 0;
      for (let x = 0; x < GRID; x++) s += ranked[y * GRID + x] * cv[x];
      rowPass[v * GRID + y] = s;
    }
  }
  COEFFICIENTS.forEach(([u, v], i) => {
    const cu = COSINES[u];
    let s = 0;
    for (let y = 0; y < GRID; y++) s += rowPass[v * GRID + y] * cu[y];
    coeffs[i] = s;
  });
  const median = medianOf(coeffs);
  let hex = '';
  for (let nibble = 0; nibble < FINGERPRINT_BITS / 4; nibble++) {
    let d = 0;
    for (let b = 0; b < 4; b++) d = (d << 1) | (coeffs[nibble * 4 + b] > median ? 1 : 0);
    hex += d.toString(16);
  }
  return hex;
}

const FINGERPRINT_PATTERN = /^[0-9a-f]{32}$/;

/**
 * Bits in which two fingerprints differ (Hamming distance), 0..128.
 * @throws {RangeError} when either is not a fingerprint.
 */
export function fingerprintDistance(a: string, b: string): number {
  if (!FINGERPRINT_PATTERN.test(a) || !FINGERPRINT_PATTERN.test(b)) throw new RangeError('a fingerprint is 32 hexadecimal digits');
  let bits = 0;
  for (let i = 0; i < 32; i += 8) {
    let x = (parseInt(a.slice(i, i + 8), 16) ^ parseInt(b.slice(i, i + 8), 16)) >>> 0;
    while (x) {
      x &= x - 1;
      bits++;
    }
  }
  return bits;
}

/** Whether two fingerprints are close enough to show their scans as the same picture. */
export function isSamePicture(a: string, b: string): boolean {
  return fingerprintDistance(a, b) <= SAME_PICTURE_DISTANCE;
}

/** Mean grey (Rec. 709 weights on the codes; exact enough for a ranking) of each cell of a GRID x GRID lattice over the picture inside any paper border. */
function greyCopy({ data, width, height, channels, depth }: FingerprintPixels): Float64Array {
  if (!Number.isInteger(width) || !Number.isInteger(height) || channels < 1 || channels > 4) throw new RangeError('pixels need a whole width, height and 1 to 4 channels');
  if (data.length !== width * height * channels) throw new RangeError(`pixel data has ${data.length} values, not ${width}x${height}x${channels}`);
  if (width < MIN_SIDE || height < MIN_SIDE) throw new RangeError(`a scan needs at least ${MIN_SIDE} pixels a side for its fingerprint`);
  // a working copy of at most WORKING_SIDE pixels: the border's lines and the 32 x 32 cells need no more
  // (and never fewer than MIN_SIDE pixels on its short side, so that a narrow scan still fills every cell)
  const f = Math.max(1, Math.min(Math.ceil(Math.max(width, height) / WORKING_SIDE), Math.floor(Math.min(width, height) / MIN_SIDE)));
  const gw = Math.floor(width / f);
  const gh = Math.floor(height / f);
  const grey = new Float32Array(gw * gh);
  for (let y = 0; y < gh * f; y++) {
    const row = Math.floor(y / f) * gw;
    for (let x = 0, i = y * width * channels; x < gw * f; x++, i += channels) {
      grey[row + Math.floor(x / f)] += channels >= 3 ? 0.2126 * data[i] + 0.7152 * data[i + 1] + 0.0722 * data[i + 2] : data[i];
    }
  }
  // as 8-bit codes, which the paper's limits are in
  const scale = 1 / (f * f * (depth === 16 ? 257 : 1));
  for (let k = 0; k < grey.length; k++) grey[k] *= scale;
  const { left, top, right, bottom } = pictureArea(grey, gw, gh);
  const w = right - left;
  const h = bottom - top;
  const sums = new Float64Array(GRID * GRID);
  const counts = new Float64Array(GRID * GRID);
  const colOf = new Int32Array(w);
  for (let x = 0; x < w; x++) colOf[x] = Math.min(GRID - 1, Math.floor((x * GRID) / w));
  for (let y = 0; y < h; y++) {
    const row = Math.min(GRID - 1, Math.floor((y * GRID) / h)) * GRID;
    const start = (top + y) * gw + left;
    for (let x = 0; x < w; x++) {
      sums[row + colOf[x]] += grey[start + x];
      counts[row + colOf[x]]++;
    }
  }
  for (let k = 0; k < sums.length; k++) sums[k] /= counts[k];
  return sums;
}

/**
 * The scan without its white paper border: a print scanned whole has one, a rescan from the
 * negative has none, and left in it would shift and shrink the picture between the two. From each
 * side, lines that are light and even (paper, stained or not) are dropped, at most BORDER_LIMIT of
 * the side; a picture whose own edge is even and light (a pale sky) loses the same lines in every
 * scan of it.
 */
function pictureArea(grey: Float32Array, width: number, height: number): { left: number; top: number; right: number; bottom: number } {
  const colSum = new Float64Array(width);
  const colSq = new Float64Array(width);
  const rowSum = new Float64Array(height);
  const rowSq = new Float64Array(height);
  for (let y = 0, k = 0; y < height; y++) {
    for (let x = 0; x < width; x++, k++) {
      const v = grey[k];
      colSum[x] += v;
      colSq[x] += v * v;
      rowSum[y] += v;
      rowSq[y] += v * v;
    }
  }
  const paper = (sum: number, sq: number, n: number) => {
    const mean = sum / n;
    return mean > PAPER_MIN_GREY && sq / n - mean * mean < PAPER_MAX_SPREAD * PAPER_MAX_SPREAD;
  };
  const isPaperCol = (x: number) => paper(colSum[x], colSq[x], height);
  const isPaperRow = (y: number) => paper(rowSum[y], rowSq[y], width);
  const maxX = Math.floor(width * BORDER_LIMIT);
  const maxY = Math.floor(height * BORDER_LIMIT);
  let left = 0;
  let right = width;
  let top = 0;
  let bottom = height;
  while (left < maxX && isPaperCol(left)) left++;
  while (width - right < maxX && isPaperCol(right - 1)) right--;
  while (top < maxY && isPaperRow(top)) top++;
  while (height - bottom < maxY && isPaperRow(bottom - 1)) bottom--;
  return { left, top, right, bottom };
}

/** Each value replaced by its rank 0..1 (ties share their mean rank). */
function ranks(values: Float64Array): Float64Array {
  const order = Array.from(values.keys()).sort((a, b) => values[a] - values[b]);
  const out = new Float64Array(values.length);
  for (let i = 0; i < order.length; ) {
    let j = i;
    while (j + 1 < order.length && values[order[j + 1]] === values[order[i]]) j++;
    const rank = (i + j) / 2 / (order.length - 1);
    for (let k = i; k <= j; k++) out[order[k]] = rank;
    i = j + 1;
  }
  return out;
}

function medianOf(values: Float64Array): number {
  const sorted = Float64Array.from(values).sort();
  const mid = sorted.length >> 1;
  return sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
}
