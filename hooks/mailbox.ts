import { useQuery } from '@tanstack/react-query';
import { api } from './api';

export type OutboxMessage = { to: string[]; subject: string; text: string; html: string; sentAt: string };

export function useOutbox() {
  return useQuery({ queryKey: ['dev', 'outbox'], queryFn: () => api<OutboxMessage[]>('/api/dev/outbox'), refetchInterval: 15_000 });
}
