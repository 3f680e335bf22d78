import nodemailer, { type Transporter } from 'nodemailer';
import { config } from './config.ts';

let transport: Transporter | undefined;

function transporter(): Transporter {
  const c = config();
  transport ??= nodemailer.createTransport({
    host: c.smtp.host,
    port: c.smtp.port,
    secure: c.smtp.secure,
    auth: c.smtp.auth,
    // The local fake speaks plain SMTP; a real server in production negotiates TLS.
    ignoreTLS: !c.production,
  });
  return transport;
}

export interface Mail {
  to: string;
  subject: string;
  text: string;
  html?: string;
}

/** Sends one e-mail through the configured SMTP server (the local fake in development and tests). */
export async function sendMail(mail: Mail): Promise<void> {
  await transporter().sendMail({ from: config().mailFrom, ...mail });
}

/** Escapes text for the small HTML bodies of our e-mails. */
export function escapeHtml(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/** A short e-mail with one action link, in text and HTML. */
export function linkMail(to: string, subject: string, intro: string, linkLabel: string, url: string, outro = ''): Mail {
  const text = `${intro}\n\n${linkLabel}: ${url}\n\n${outro}`.trim() + '\n';
  const html = `<p>${escapeHtml(intro)}</p><p><a href="${escapeHtml(url)}">${escapeHtml(linkLabel)}</a></p>${outro ? `<p>${escapeHtml(outro)}</p>` : ''}`;
  return { to, subject, text, html };
}
