import type { Api } from '../http/api';
import { problems } from '../http/problem';
import { readOutbox } from './fake-smtp';

/** The dev mailbox (outside production): what the console has sent, as the mail fake received it. */
export function registerMailRoutes(api: Api, deps: { outboxDir: string; devMailbox: boolean }) {
  api.get('/api/dev/outbox', (_req, res) => {
    if (!deps.devMailbox) throw problems.notFound('mailbox', 'The dev mailbox is off in production mode.');
    res.json(readOutbox(deps.outboxDir));
  });
}
