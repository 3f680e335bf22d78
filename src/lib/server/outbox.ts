import { storage } from './storage.ts';

/** One message caught by the local mail fake (development and tests only). */
export interface CaughtMail {
  id: string;
  receivedAt: string;
  from: string;
  to: string[];
  subject: string;
  text: string;
  html: string | null;
}

export const OUTBOX_PREFIX = 'outbox';

/** Messages caught by the mail fake, newest first. */
export async function listOutbox(limit = 200): Promise<CaughtMail[]> {
  const keys = (await storage().list(OUTBOX_PREFIX)).filter((k) => k.endsWith('.json')).sort().reverse().slice(0, limit);
  const out: CaughtMail[] = [];
  for (const k of keys) {
    try {
      out.push(JSON.parse((await storage().readBuffer(k)).toString('utf8')) as CaughtMail);
    } catch {
      // A message being written right now is skipped until the next look.
    }
  }
  return out;
}

/** The http(s) links in a caught message's text. */
export function linksIn(mail: CaughtMail): string[] {
  return [...mail.text.matchAll(/https?:\/\/[^\s<>"]+/g)].map((m) => m[0]);
}
