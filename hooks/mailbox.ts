import { useQuery } from '@tanstack/react-query';
import { api } from './api';
import type { OutboxMessage } from '../schemas/mail';

// The message's shape lives in schemas/mail.ts (the server files it so); screens import it from here.
export type { OutboxMessage };

export function useOutbox() {
  return useQuery({ queryKey: ['dev', 'outbox'], queryFn: () => api<OutboxMessage[]>('/api/dev/outbox'), refetchInterval: 15_000 });
}
