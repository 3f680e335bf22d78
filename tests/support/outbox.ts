import { linksIn, listOutbox, type CaughtMail } from '../../src/lib/server/outbox.ts';

/** Waits for the mail fake to catch a message to `to` whose subject matches, and returns it. */
export async function waitForMail(to: string, subject: RegExp, timeoutMs = 15_000): Promise<CaughtMail & { links: string[] }> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const found = (await listOutbox(500)).find((m) => m.to.includes(to) && subject.test(m.subject));
    if (found) return { ...found, links: linksIn(found) };
    await new Promise((r) => setTimeout(r, 200));
  }
  throw new Error(`no e-mail to ${to} matching ${subject} within ${timeoutMs} ms`);
}
