/** Shapes the review API answers with; shared by the server and the islands. */
import type { Analysis } from '../restoration/analysis.ts';
import type { Correction as CorrectionParams } from '../restoration/correction.ts';
import type { Decision } from './words.ts';

/** One version of a print's correction as the API shows it. */
export interface CorrectionVersion {
  version: number;
  origin: string;
  params: CorrectionParams;
  createdBy: { id: string; name: string } | null;
  createdAt: string;
}

/** Everything the print review view needs about one print. */
export interface ItemDetail {
  id: string;
  /** The scan of the print's back, when one is paired with it (shown as scanned, never corrected). */
  back?: { id: string; batchId: string; originalName: string } | null;
  archiveId: string;
  batchId: string;
  batchName: string;
  seq: number;
  originalName: string;
  state: string;
  failureReason: string | null;
  fadeGrade: string | null;
  analysis: Analysis | null;
  width: number | null;
  height: number | null;
  currentVersion: number | null;
  renderVersion: number | null;
  current: CorrectionParams | null;
  proposed: CorrectionParams | null;
  decision: Decision | null;
  decidedBy: { id: string; name: string } | null;
  decidedAt: string | null;
  negativeAvailable: string | null;
  negativeLocation: string | null;
  rescanNote: string | null;
  lockVersion: number;
  corrections: CorrectionVersion[];
  previous: string | null;
  next: string | null;
}

/** A print as the batch review table shows it. */
export interface ItemRow {
  id: string;
  seq: number;
  originalName: string;
  state: string;
  fadeGrade: string | null;
  paperBase: { srgb: [number, number, number]; deltaE00: number } | null;
  dyes: { cyan: number; magenta: number; yellow: number } | null;
  dyeLoss: number | null;
  /** CIEDE2000 the engine expects its proposal to leave on this print (its uncertainty); null before it gave one. */
  expectedDeltaE00: number | null;
  rescanAdvised: boolean;
  decision: Decision | null;
  decidedByName: string | null;
  negativeLocation: string | null;
  lockVersion: number;
  hasThumbnail: boolean;
  /** The thumbnail's versioned address (the browser keeps it until the print's copies change); null without one. */
  thumbnail: string | null;
  /** Why a failed print could not be read, in plain words. */
  failureReason: string | null;
  /** The print's caption, when it has one. */
  caption: string | null;
}

/** A removed batch or print as "Recently removed" lists it. */
export interface RemovedEntry {
  kind: 'batch' | 'print';
  id: string;
  /** The batch's name, or the print's batch. */
  batchName: string;
  batchId: string;
  seq: number | null;
  originalName: string | null;
  prints: number;
  removedAt: string;
  purgeAfter: string;
}
