// The dev mailbox (outside production): messages as the local mail fake filed them.

/** One message of GET /api/dev/outbox (newest first). */
export type OutboxMessage = { to: string[]; subject: string; text: string; html: string; sentAt: string };
