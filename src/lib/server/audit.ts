import type { Transaction } from 'sequelize';
import { AuditEvent } from '../../../db/index.ts';

export interface AuditEntry {
  archiveId: string | null;
  actorId: string | null;
  action: string;
  subjectType: string;
  subjectId?: string | null;
  details?: Record<string, unknown>;
  requestId?: string | null;
}

/** Appends one line to the audit log: who did what to what (the time is the database's). */
export async function recordAudit(entry: AuditEntry, transaction?: Transaction): Promise<void> {
  await AuditEvent.create(
    {
      archiveId: entry.archiveId,
      actorId: entry.actorId,
      action: entry.action,
      subjectType: entry.subjectType,
      subjectId: entry.subjectId ?? null,
      details: entry.details ?? {},
      requestId: entry.requestId ?? null,
    },
    { transaction },
  );
}
