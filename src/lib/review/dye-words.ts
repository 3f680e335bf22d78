/**
 * Colours for the words "cyan", "magenta" and "yellow" in running text: each dark enough to be
 * read on the white of a card (WCAG 2.2 contrast of at least 4.5:1 for normal text), yet still
 * recognisably the dye it names. Pure: shared by pages and tests.
 */
export const DYE_WORD_COLOURS = { cyan: '#2a6f82', magenta: '#b0487a', yellow: '#8a6d12' } as const;

/** Relative luminance of an sRGB colour given as 0–255 channels (WCAG 2.2, "relative luminance"). */
export function relativeLuminance([r, g, b]: [number, number, number]): number {
  const lin = (c: number) => {
    const s = c / 255;
    return s <= 0.04045 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4;
  };
  return 0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b);
}

/** The contrast ratio of two colours, from 1 to 21 (WCAG 2.2, "contrast ratio"). */
export function contrastRatio(a: [number, number, number], b: [number, number, number]): number {
  const [hi, lo] = [relativeLuminance(a), relativeLuminance(b)].sort((x, y) => y - x);
  return (hi + 0.05) / (lo + 0.05);
}

/** "#2a6f82" as channels. */
export function hexChannels(hex: string): [number, number, number] {
  const n = parseInt(hex.replace(/^#/, ''), 16);
  return [(n >> 16) & 255, (n >> 8) & 255, n & 255];
}
