/** One back of a print as the pages, islands and routes show it. */
export interface BackView {
  id: string;
  batchId: string;
  originalName: string;
  frontItemId: string | null;
  /** The front's number in its batch, when paired. */
  frontSeq: number | null;
  /** 'name', 'feed order' or 'hand' when paired; 'apart' once unpaired by hand; null while waiting. */
  pairedBy: string | null;
  /** The text read from the back, when it has been read. */
  backText: string | null;
  textRead: boolean;
}

/** The address of a back's small copy (as scanned, never corrected); versioned, so the browser keeps it. */
export function backPictureUrl(back: { id: string; batchId: string }, size: 'thumbnail' | 'preview' = 'thumbnail'): string {
  return `/api/batches/${back.batchId}/backs/${back.id}?size=${size}&v=${back.id}`;
}

/** How a pairing came about, in words. */
export const PAIRED_BY_WORDS: Record<string, string> = {
  name: 'paired by file name',
  'feed order': 'paired by scanning order',
  hand: 'paired by hand',
};
