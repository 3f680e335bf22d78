/**
 * Generated backs of prints, invented for the tests and the benchmark: photographic paper of a few
 * ages (white to cream) with texture and scanner noise, carrying a lab's imprint (an invented lab
 * name and a month and year) in one of a few fonts, a rotated handwritten-style line with a year,
 * both, or nothing. Drawn from SVG text with sharp (fonts: Debian's DejaVu faces, as
 * fontconfig finds them).
 */
import sharp from 'sharp';

export const PAPERS: [number, number, number][] = [
  [246, 244, 238],
  [238, 228, 205],
  [226, 212, 180],
];
export const STAMP_FONTS = ['DejaVu Sans', 'DejaVu Serif', 'DejaVu Sans Mono', 'DejaVu Sans Condensed'];
const MONTHS = ['JAN', 'FEB', 'MAR', 'APR', 'MAY', 'JUN', 'JUL', 'AUG', 'SEP', 'OCT', 'NOV', 'DEC'];

export type BackMarks = 'blank' | 'stamp' | 'handwriting' | 'both';

export interface GeneratedBack {
  bytes: Buffer;
  /** The date the stamp carries, in EDTF (`1981-08`), or the handwritten year, or null for none. */
  date: string | null;
}

/** A small deterministic generator. */
export function random(seed: number) {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = Math.imul(s ^ (s >>> 15), s | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** A JPEG back of `width`×`height` with the given marks; the stamp's date depends on `seed`. */
export async function generatedBack(marks: BackMarks, seed: number, size = { width: 1200, height: 800 }): Promise<GeneratedBack> {
  const { width: W, height: H } = size;
  const rnd = random(seed);
  const paper = PAPERS[seed % PAPERS.length];
  const font = STAMP_FONTS[seed % STAMP_FONTS.length];
  const month = seed % 12;
  const year = 1972 + (seed % 20);
  const k = W / 1200;
  const parts: string[] = [];
  let date: string | null = null;
  if (marks === 'stamp' || marks === 'both') {
    date = `${year}-${String(month + 1).padStart(2, '0')}`;
    const x = Math.round((80 + rnd() * 300) * k);
    const y = Math.round((80 + rnd() * 160) * k);
    parts.push(`<g transform="translate(${x} ${y}) scale(${k})" fill="none" stroke="#4a3f7a" stroke-width="3">
      <rect width="560" height="130" rx="10"/>
      <text x="24" y="52" font-family="${font}" font-size="38" fill="#4a3f7a" stroke="none">HARTIGAN PHOTO LAB</text>
      <text x="24" y="106" font-family="${font}" font-size="38" fill="#4a3f7a" stroke="none">${MONTHS[month]} ${year}  No 0714</text></g>`);
  }
  if (marks === 'handwriting' || marks === 'both') {
    const angle = -8 + Math.round(rnd() * 16);
    const hy = Math.round(H * 0.72);
    let d = `M ${Math.round((80 + rnd() * 60) * k)} ${hy}`;
    for (let x = 0; x < 30; x++) d += ` q ${4 * k} ${(-14 - Math.round(rnd() * 10)) * k} ${8 * k} 0 t ${(5 + Math.round(rnd() * 4)) * k} ${(Math.round(rnd() * 6) - 3) * k}`;
    parts.push(`<g transform="rotate(${angle} ${W / 2} ${hy})"><path d="${d}" fill="none" stroke="#2a2f5a" stroke-width="${2.6 * k}" stroke-linecap="round"/>
      <text x="${Math.round(W * 0.55)}" y="${hy}" font-family="DejaVu Serif" font-style="italic" font-size="${Math.round(44 * k)}" fill="#2a2f5a">${year + 1}</text></g>`);
    if (!date) date = String(year + 1);
  }
  const svg = Buffer.from(`<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}">${parts.join('')}</svg>`);
  const base = new Uint8Array(W * H * 3);
  for (let i = 0; i < W * H; i++) {
    const grain = (rnd() - 0.5) * 10 + Math.sin(i * 0.013) * 2;
    for (let c = 0; c < 3; c++) base[i * 3 + c] = Math.max(0, Math.min(255, Math.round(paper[c] + grain)));
  }
  const bytes = await sharp(Buffer.from(base), { raw: { width: W, height: H, channels: 3 } })
    .composite([{ input: svg }])
    .jpeg({ quality: 88 })
    .toBuffer();
  return { bytes, date };
}
