// Reading what Heliodor mailed, as the local mail fake filed it (the dev mailbox's folder).
import { readOutbox, type OutboxMessage } from '../../server/mail/fake-smtp';
import { testEnv } from './env';

/** Waits (up to 15 s) for the newest message to `to` whose subject contains `subject`, sent after `since`. */
export async function waitForMail(to: string, subject: string, since = new Date(0)): Promise<OutboxMessage> {
  const deadline = Date.now() + 15_000;
  for (;;) {
    const found = readOutbox(testEnv().outboxDir, 500).find((m) => m.to.includes(to) && m.subject.includes(subject) && Date.parse(m.sentAt) >= since.getTime());
    if (found) return found;
    if (Date.now() > deadline) throw new Error(`no mail to ${to} about "${subject}"`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

/** The link a message leads with (the first line of its text part) and the one-time token in it. */
export function linkOf(message: OutboxMessage): { link: string; token: string } {
  const link = message.text.split('\n')[0].trim();
  const token = new URL(link).hash.replace(/^#t=/, '');
  return { link, token };
}

/** Every message to an address, newest first. */
export const mailTo = (to: string) => readOutbox(testEnv().outboxDir, 500).filter((m) => m.to.includes(to));
