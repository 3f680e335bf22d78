/**
 * The shapes of an export as the API, the job and the export page share them. Pure: safe in the
 * browser.
 */
import { z } from 'zod';
import { DEFAULT_NAME_PATTERN, namePatternSchema } from './naming.ts';

export const EXPORT_STATES = ['queued', 'running', 'ready', 'failed'] as const;
export type ExportState = (typeof EXPORT_STATES)[number];
/** What a running export is doing: putting the prints into the zip, or checking the written bag. */
export type ExportStep = 'packing' | 'checking';

/** What an export takes: chosen prints, one batch, or everything accepted since the last export. */
export type ExportSelection = { kind: 'items'; itemIds: string[] } | { kind: 'batch'; batchId: string } | { kind: 'since_last' };

export interface ExportOptions {
  includeOriginals?: boolean;
  namePattern?: string;
}

/** What the export form sends. */
export const exportRequestSchema = z
  .object({
    selection: z.discriminatedUnion('kind', [
      z.object({ kind: z.literal('items'), itemIds: z.array(z.string().uuid('Not an item id.')).min(1, 'Choose at least one print.').max(20000) }).strict(),
      z.object({ kind: z.literal('batch'), batchId: z.string().uuid('Not a batch id.') }).strict(),
      z.object({ kind: z.literal('since_last') }).strict(),
    ]),
    includeOriginals: z.boolean().default(false),
    namePattern: namePatternSchema.default(DEFAULT_NAME_PATTERN),
  })
  .strict();
export type ExportRequest = z.infer<typeof exportRequestSchema>;

/** An export as the API and the page show it. */
export interface ExportStatus {
  id: string;
  state: ExportState;
  selection: ExportSelection;
  options: ExportOptions;
  items: number;
  /** Prints packed into the zip. */
  progress: { done: number; total: number; percent: number };
  /** While running, what it is doing; null otherwise. */
  step: ExportStep | null;
  /** Files of the written bag read back and checked against the manifest (the fixity check). */
  check: { done: number; total: number };
  zipBytes: number | null;
  zipSha256: string | null;
  verified: boolean;
  failureReason: string | null;
  createdAt: string;
  finishedAt: string | null;
  downloadUrl: string | null;
  statusUrl: string;
}

/**
 * What the export page says of a running export: the prints being packed, then the check of every
 * file of the written bag (which takes a while for hundreds of prints), never a bar stuck at the
 * last print.
 */
export function exportProgressWords(e: Pick<ExportStatus, 'state' | 'step' | 'progress' | 'check'>): { words: string; percent: number } {
  const prints = (n: number) => `${n} ${n === 1 ? 'print' : 'prints'}`;
  if (e.state === 'queued') return { words: 'Waiting for the worker to start', percent: 0 };
  if (e.step === 'checking') {
    const { done, total } = e.check;
    return {
      words: total
        ? `All ${prints(e.progress.total)} packed. Checking every file of the archive against its checksum: ${done} of ${total} files`
        : `All ${prints(e.progress.total)} packed. Checking every file of the archive against its checksum`,
      percent: total ? Math.min(100, Math.round((100 * done) / total)) : 0,
    };
  }
  return { words: `Packing: ${e.progress.done} of ${prints(e.progress.total)}`, percent: e.progress.percent };
}
