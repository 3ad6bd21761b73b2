// The local mail fake: a real SMTP server on loopback that files every message in the outbox folder.
import fs from 'node:fs';
import path from 'node:path';
import crypto from 'node:crypto';
import { SMTPServer } from 'smtp-server';
import { simpleParser } from 'mailparser';

import type { OutboxMessage } from '../../schemas/mail';

export type { OutboxMessage };

export function startFakeSmtp(port: number, outboxDir: string): Promise<SMTPServer> {
  fs.mkdirSync(outboxDir, { recursive: true });
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    banner: 'Heliodor mail fake',
    size: 5 * 1024 * 1024,
    onData(stream, session, callback) {
      simpleParser(stream)
        .then((parsed) => {
          const message: OutboxMessage = {
            to: session.envelope.rcptTo.map((r) => r.address),
            subject: parsed.subject ?? '',
            text: parsed.text ?? '',
            html: typeof parsed.html === 'string' ? parsed.html : '',
            sentAt: new Date().toISOString(),
          };
          const name = `${Date.now()}-${crypto.randomBytes(4).toString('hex')}.json`;
          const tmp = path.join(outboxDir, `.${name}.tmp`);
          fs.writeFileSync(tmp, JSON.stringify(message));
          fs.renameSync(tmp, path.join(outboxDir, name));
          callback();
        })
        .catch((err: Error) => callback(err));
    },
  });
  return new Promise((resolve, reject) => {
    server.once('error', reject);
    server.listen(port, '127.0.0.1', () => resolve(server));
  });
}

/** Messages in the outbox, newest first. */
export function readOutbox(outboxDir: string, limit = 200): OutboxMessage[] {
  if (!fs.existsSync(outboxDir)) return [];
  return fs
    .readdirSync(outboxDir)
    .filter((f) => f.endsWith('.json'))
    .sort()
    .reverse()
    .slice(0, limit)
    .map((f) => JSON.parse(fs.readFileSync(path.join(outboxDir, f), 'utf8')) as OutboxMessage);
}
