/**
 * How to keep an archive, and the prints and negatives themselves, safe: the words the app's
 * "Keeping the archive safe" page and every export's "about this archive" page share. Text in
 * `backticks` is shown as code. Pure: shared.
 */

export interface CareSection {
  id: string;
  heading: string;
  paragraphs: string[];
  /** Commands to show as a block, between the paragraphs and the list. */
  commands?: string;
  /** Paragraphs after the commands. */
  after?: string[];
  list?: string[];
  /** A warning shown after the list. */
  caution?: string;
}

export const CARE_INTRO = "Digital files last only as long as someone looks after them. A few habits keep a family's photographs safe for decades.";

export const CARE_SECTIONS: readonly CareSection[] = [
  {
    id: 'copies',
    heading: 'Three copies, two kinds of media, one elsewhere',
    paragraphs: [
      "Keep at least three copies of every export. Put them on at least two different kinds of storage (for example a computer's disk and an external drive, or a drive and a cloud service), and keep one copy in another place: a relative's house, a safe deposit box, or a cloud service. A fire, a theft or one failing drive then cannot take everything.",
    ],
  },
  {
    id: 'checksums',
    heading: 'Check the checksums now and then',
    paragraphs: ['Every export is a BagIt bag: `manifest-sha256.txt` holds a SHA-256 checksum for every file. Once a year, and whenever you copy the archive to a new drive, check each copy:'],
    commands: 'npm run verify-bag -- /path/to/export.zip\nnpm run verify-bag -- /path/to/unpacked-folder',
    after: [
      'It lists every file that is missing, extra or changed. Any BagIt tool can check the bag too. If a copy fails, replace it from a copy that passes, then check again.',
      'Drives wear out: move the archive to new storage every five years or so, and check it after the move.',
    ],
  },
  {
    id: 'scans',
    heading: 'Keep the untouched scans',
    paragraphs: [
      'JPEG is a safe format for sharing and viewing, but a corrected JPEG is one reading of the print. Keep the untouched scans too (tick "put the untouched scans alongside" when exporting): better corrections may come later, and they are the record of the print as it was.',
    ],
  },
  {
    id: 'consent',
    heading: 'Share with consent',
    paragraphs: ["The photographs show living people. Share the archive with the family's consent, and ask before putting photographs of living relatives online."],
  },
  {
    id: 'originals',
    heading: 'The prints and negatives themselves',
    paragraphs: [],
    list: [
      'Store prints and negatives cool, dark and dry, in enclosures that pass the Photographic Activity Test (ISO 18916); keep negatives apart from prints; interleave precious prints with archival tissue.',
      'Do not wash old prints, wipe them with solvents, tape or laminate them. Handle them by the edges with clean hands or nitrile gloves.',
    ],
    caution: 'Mould on old prints and albums can be a health hazard: do not handle mouldy material without protection. For valuable or damaged items, consult a conservator and follow local guidance.',
  },
];

/** A care text as pieces: plain text and code (the `backticked` parts). */
export function careTextParts(text: string): { code: boolean; text: string }[] {
  return text.split('`').map((t, i) => ({ code: i % 2 === 1, text: t })).filter((p) => p.text !== '');
}
