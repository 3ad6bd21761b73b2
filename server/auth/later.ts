// Work that runs after the answer has gone: a password-reset request answers at once and the same way
// whether or not the address belongs to someone, and only then writes the link and sends the e-mail.
// `settled()` lets a shutdown (or a test) wait for what is still running.
import type { Logger } from 'pino';

export type Later = { run(what: string, work: () => Promise<void>): void; settled(): Promise<void> };

export function createLater(logger: Logger): Later {
  const running = new Set<Promise<void>>();
  return {
    run(what, work) {
      const p = Promise.resolve()
        .then(work)
        .catch((err: unknown) => logger.error({ err }, `${what} failed`))
        .finally(() => running.delete(p));
      running.add(p);
    },
    async settled() {
      while (running.size > 0) await Promise.all([...running]);
    },
  };
}
