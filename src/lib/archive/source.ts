/**
 * Where a print came from, in words a relative reads without knowing the program: "Box: Shoebox 1;
 * envelope Summer 81", "From: Blue biscuit tin". Written into exports (XMP dc:source) and the rescan
 * list. Pure: shared with the browser.
 */
import { SOURCE_KIND_LABELS, type SourceKind } from '../batches/schemas.ts';

/**
 * The physical source of a print: the batch's kind and label, then the print's own envelope or
 * detail. "Something else" reads as "From: <label>". Null when nothing is known.
 */
export function sourceInWords(kind: string | null | undefined, label: string | null | undefined, detail?: string | null): string | null {
  const name = label?.trim() ?? '';
  let head = '';
  if (kind === 'other' || !kind || !(kind in SOURCE_KIND_LABELS)) head = name ? `From: ${name}` : '';
  else head = name ? `${SOURCE_KIND_LABELS[kind as SourceKind]}: ${name}` : SOURCE_KIND_LABELS[kind as SourceKind];
  const parts = [head, detail?.trim() ?? ''].filter(Boolean);
  return parts.length ? parts.join('; ') : null;
}
