/**
 * Pairing each back scan with its front within one upload. Two ways people scan backs:
 * - as files of their own, named after the front: `0007_back.jpg`, `0007-b.jpg`, `0007 reverse.jpg`,
 *   `0007_verso.jpg`;
 * - in the same feed as the fronts (a scanner that scans both sides writes front, back, front, back,
 *   in feed order), where only the picture tells a back from a front.
 * By name first (a named back pairs with the front of the same stem), then by feed order (a scan
 * recognised as a back, with no front by name, pairs with the scan fed just before it, when that one
 * is a front without a back). Pure, so the batch page can show the same pairing it will get.
 */

/** One scan of an upload, in feed order (`seq`). */
export interface FedScan {
  id: string;
  seq: number;
  /** The file name as uploaded. */
  name: string;
  /** Whether its picture looks like a print's back (paper-back.ts), when measured. */
  looksLikeBack?: boolean;
}

export interface BackPair {
  frontId: string;
  backId: string;
  /** How the pair was found. */
  by: 'name' | 'feed order';
}

export interface Pairing {
  pairs: BackPair[];
  /** Scans taken for backs that found no front: shown to the archivist to pair by hand. */
  unpairedBacks: string[];
}

/** Words after the stem that name a back (our own list of the usual ones), then an optional copy number. */
const BACK_SUFFIX = /^(.*?)[\s._-]+(back|b|reverse|rev|verso)(?:[\s._-]*\(?\d{1,2}\)?)?$/i;

/** The file name without its folder and extension. */
function stemOf(name: string): string {
  const base = name.split(/[\\/]/).pop() ?? name;
  return base.replace(/\.[A-Za-z0-9]{1,5}$/, '');
}

/** Comparable form of a stem: case and separators do not matter ("Scan 7" is "scan_7"). */
function key(stem: string): string {
  return stem.toLowerCase().replace(/[\s._-]+/g, '_');
}

/** The stem of the front a file name says it is the back of, or null when the name says nothing. */
export function frontStemOf(name: string): string | null {
  const m = BACK_SUFFIX.exec(stemOf(name));
  return m && m[1] ? m[1] : null;
}

/** Pairs the backs among `scans` with their fronts (see the module's comment). */
export function pairBacks(scans: FedScan[]): Pairing {
  const inOrder = [...scans].sort((a, b) => a.seq - b.seq);
  const byStem = new Map<string, FedScan>();
  const namedBacks = new Map<string, string>();
  for (const s of inOrder) {
    const front = frontStemOf(s.name);
    if (front) namedBacks.set(s.id, key(front));
    else if (!byStem.has(key(stemOf(s.name)))) byStem.set(key(stemOf(s.name)), s);
  }

  const pairs: BackPair[] = [];
  const hasBack = new Set<string>();
  const isBack = new Set<string>();
  const unpaired: string[] = [];
  for (const s of inOrder) {
    const stem = namedBacks.get(s.id);
    if (stem === undefined) continue;
    const front = byStem.get(stem);
    // a file named like a back whose front is not in the upload still is a back; by name alone it is
    // kept apart only when its picture agrees or was not measured
    if (front && !hasBack.has(front.id) && !namedBacks.has(front.id)) {
      pairs.push({ frontId: front.id, backId: s.id, by: 'name' });
      hasBack.add(front.id);
      isBack.add(s.id);
    } else if (s.looksLikeBack !== false) {
      isBack.add(s.id);
      unpaired.push(s.id);
    }
  }

  for (let n = 0; n < inOrder.length; n++) {
    const s = inOrder[n];
    if (!s.looksLikeBack || isBack.has(s.id) || hasBack.has(s.id)) continue;
    const before = inOrder[n - 1];
    if (before && !before.looksLikeBack && !isBack.has(before.id) && !hasBack.has(before.id)) {
      pairs.push({ frontId: before.id, backId: s.id, by: 'feed order' });
      hasBack.add(before.id);
    } else {
      unpaired.push(s.id);
    }
    isBack.add(s.id);
  }
  return { pairs, unpairedBacks: unpaired };
}
