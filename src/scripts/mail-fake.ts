/**
 * The local stand-in for a hosted SMTP service: accepts every message on 127.0.0.1 and keeps it
 * as JSON under storage/outbox/, where the development Outbox page shows it.
 */
import { randomUUID } from 'node:crypto';
import { simpleParser } from 'mailparser';
import { SMTPServer } from 'smtp-server';
import { config } from '../lib/server/config.ts';
import { OUTBOX_PREFIX, type CaughtMail } from '../lib/server/outbox.ts';
import { storage } from '../lib/server/storage.ts';

const c = config();
if (c.production) {
  console.error('mail fake: refusing to run with APP_ENV=production (set real SMTP settings instead).');
  process.exit(1);
}

const server = new SMTPServer({
  authOptional: true,
  disabledCommands: ['STARTTLS'],
  size: 10 * 1024 * 1024,
  async onData(stream, _session, callback) {
    try {
      const parsed = await simpleParser(stream);
      const id = randomUUID();
      const receivedAt = new Date().toISOString();
      const to = (Array.isArray(parsed.to) ? parsed.to : parsed.to ? [parsed.to] : []).flatMap((a) => a.value.map((v) => v.address ?? ''));
      const mail: CaughtMail = {
        id,
        receivedAt,
        from: parsed.from?.text ?? '',
        to,
        subject: parsed.subject ?? '',
        text: parsed.text ?? '',
        html: typeof parsed.html === 'string' ? parsed.html : null,
      };
      await storage().put(`${OUTBOX_PREFIX}/${receivedAt.replace(/[:.]/g, '-')}-${id}.json`, Buffer.from(JSON.stringify(mail, null, 2)));
      callback();
    } catch (err) {
      callback(err as Error);
    }
  },
});

server.listen(c.smtp.port, '127.0.0.1', () => console.log(`mail fake: listening on 127.0.0.1:${c.smtp.port}`));
const stop = () => server.close(() => process.exit(0));
process.on('SIGTERM', stop);
process.on('SIGINT', stop);
