/**
 * The shapes of an export as the API, the job and the export page share them. Pure: safe in the
 * browser.
 */
import { z } from 'zod';
import { DEFAULT_NAME_PATTERN, namePatternSchema } from './naming.ts';

export const EXPORT_STATES = ['queued', 'running', 'ready', 'failed'] as const;
export type ExportState = (typeof EXPORT_STATES)[number];

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
  progress: { done: number; total: number; percent: number };
  zipBytes: number | null;
  zipSha256: string | null;
  verified: boolean;
  failureReason: string | null;
  createdAt: string;
  finishedAt: string | null;
  downloadUrl: string | null;
  statusUrl: string;
}
