// Outgoing mail over SMTP (nodemailer). In demo and test modes it goes to the local mail fake.
import nodemailer from 'nodemailer';
import { withHtml } from './compose';

export type Mail = { to: string[]; subject: string; text: string; html?: string };
export type Mailer = { send(mail: Mail): Promise<void> };

export function createMailer(options: {
  host: string;
  port: number;
  secure: boolean;
  auth?: { user: string; pass: string };
  from: string;
}): Mailer {
  const transport = nodemailer.createTransport({
    host: options.host,
    port: options.port,
    secure: options.secure,
    auth: options.auth,
    ignoreTLS: options.host === '127.0.0.1',
    connectionTimeout: 10_000,
  });
  return {
    async send(mail) {
      if (mail.to.length === 0) return;
      // Every message leaves with a plain-text and an HTML part (server/mail/compose.ts).
      const whole = withHtml(mail);
      await transport.sendMail({ from: options.from, to: whole.to.join(', '), subject: whole.subject, text: whole.text, html: whole.html });
    },
  };
}
