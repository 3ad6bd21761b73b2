// Enrollments that wait on the phone for a connection. An enrollment that cannot be sent (no
// connection: a network error, never a refusal) is kept in IndexedDB with its photo and sent by
// itself when the connection returns (the window's `online` event), and whenever the console starts
// or the enroll screen opens. Each carries the enrollment id it was first tried with, so a copy the
// server already received is answered with the first result and never enrolled twice
// (server/loggers/enrollment.ts). A refusal is kept with the server's reason until it is discarded.
import React from 'react';
import { useQueryClient } from '@tanstack/react-query';
import { api, ApiError, upload } from './api';
import type { Enrolled } from '../schemas/loggers';
import { forgetEnrollment, keepEnrollment, phoneStoreAvailable, queuedEnrollments, type QueuedEnrollment } from './phone-store';
import { loggerKeys } from './loggers';
import { siteKeys } from './sites';

export type { QueuedEnrollment } from './phone-store';

/** Those who show the queue hear of every change; `sent` names the enrollments the server took. */
type Change = { sent?: { id: string; answer: Enrolled } };
const listeners = new Set<(change: Change) => void>();
const announce = (change: Change = {}) => listeners.forEach((l) => l(change));

/**
 * A random (version 4) UUID for a new enrollment, RFC 9562 §5.4: 122 random bits, the version nibble 4
 * and the variant bits 10. `crypto.randomUUID` exists only on secure pages; `getRandomValues` everywhere.
 */
export function newEnrollmentId(): string {
  if (typeof crypto.randomUUID === 'function') return crypto.randomUUID();
  const b = crypto.getRandomValues(new Uint8Array(16));
  b[6] = (b[6] & 0x0f) | 0x40;
  b[8] = (b[8] & 0x3f) | 0x80;
  const hex = Array.from(b, (x) => x.toString(16).padStart(2, '0')).join('');
  return `${hex.slice(0, 8)}-${hex.slice(8, 12)}-${hex.slice(12, 16)}-${hex.slice(16, 20)}-${hex.slice(20)}`;
}

export const isOffline = (err: unknown) => err instanceof ApiError && err.status === 0;

/** A refusal worth showing: the request arrived and the server said no (4xx other than a lost session). */
const refusal = (err: unknown) => err instanceof ApiError && err.status >= 400 && err.status < 500 && err.status !== 401;

const problemOf = (err: ApiError) => ({ status: err.status, title: err.title, detail: err.detail });

export async function queueEnrollment(entry: Omit<QueuedEnrollment, 'savedAt' | 'state' | 'problem' | 'enrolledLoggerId'>): Promise<QueuedEnrollment> {
  const kept: QueuedEnrollment = { ...entry, savedAt: new Date().toISOString(), state: 'waiting', problem: null, enrolledLoggerId: null };
  await keepEnrollment(kept);
  announce();
  return kept;
}

export async function discardEnrollment(id: string): Promise<void> {
  await forgetEnrollment(id);
  announce();
}

/** Sends one queued enrollment (and then its photo). Stops at the first lost connection: 'offline'. */
async function sendOne(entry: QueuedEnrollment): Promise<'done' | 'offline'> {
  let current = entry;
  if (current.state === 'waiting') {
    try {
      const answer = await api<Enrolled>('/api/enrollments', { body: current.body });
      current = { ...current, enrolledLoggerId: answer.logger.id, state: 'photo' };
      announce({ sent: { id: current.id, answer } });
      if (!current.photo) {
        await forgetEnrollment(current.id);
        return 'done';
      }
      await keepEnrollment(current);
    } catch (err) {
      if (refusal(err)) {
        await keepEnrollment({ ...current, state: 'refused', problem: problemOf(err as ApiError) });
        return 'done';
      }
      return 'offline'; // no connection, a lost session or a server in trouble: it stays to be sent later
    }
  }
  if (current.state === 'photo' && current.photo && current.enrolledLoggerId) {
    try {
      const form = new FormData();
      form.append('photo', current.photo, current.photoName ?? 'install.jpg');
      await upload<void>(`/api/loggers/${current.enrolledLoggerId}/photo`, form);
      await forgetEnrollment(current.id);
    } catch (err) {
      if (refusal(err)) {
        const e = err as ApiError;
        await keepEnrollment({ ...current, state: 'refused', problem: { ...problemOf(e), title: `Enrolled, but the photo was refused: ${e.title}` } });
        return 'done';
      }
      return 'offline';
    }
  }
  return 'done';
}

let sending: Promise<number> | null = null;
let again = false;

/**
 * Sends every waiting enrollment of this person, one at a time, oldest first. One run at a time per page;
 * asked again while running (the connection came back mid-run), it runs once more after. Resolves to how
 * many the server took.
 */
export function sendQueuedEnrollments(personId: string): Promise<number> {
  if (!phoneStoreAvailable()) return Promise.resolve(0);
  if (sending) {
    again = true;
    return sending;
  }
  const run = async (): Promise<number> => {
    let sent = 0;
    for (const entry of await queuedEnrollments(personId)) {
      if (entry.state === 'refused') continue;
      const outcome = await sendOne(entry);
      announce();
      if (outcome === 'offline') break;
      sent++;
    }
    return sent;
  };
  sending = (async () => {
    let sent = 0;
    try {
      do {
        again = false;
        sent += await run();
      } while (again);
    } finally {
      sending = null;
    }
    return sent;
  })();
  return sending;
}

/** Starts the queue for the signed-in person: now (the console starting) and whenever the connection returns. */
export function useSendQueuedEnrollments(personId: string | undefined) {
  const qc = useQueryClient();
  React.useEffect(() => {
    if (!personId || typeof window === 'undefined') return;
    const send = () =>
      void sendQueuedEnrollments(personId).then((sent) => {
        if (!sent) return;
        void qc.invalidateQueries({ queryKey: loggerKeys.all });
        void qc.invalidateQueries({ queryKey: siteKeys.all });
        void qc.invalidateQueries({ queryKey: ['overview'] });
      });
    send();
    window.addEventListener('online', send);
    return () => window.removeEventListener('online', send);
  }, [personId, qc]);
}

/** The person's queued enrollments as they change, and what the server answered to those sent while watching. */
export function useQueuedEnrollments(personId: string | undefined) {
  const [queue, setQueue] = React.useState<QueuedEnrollment[]>([]);
  const [sent, setSent] = React.useState<Record<string, Enrolled>>({});
  React.useEffect(() => {
    if (!personId) return;
    let live = true;
    const read = () => void queuedEnrollments(personId).then((rows) => live && setQueue(rows), () => undefined);
    const hear = (change: Change) => {
      if (change.sent) {
        const { id, answer } = change.sent;
        setSent((s) => ({ ...s, [id]: answer }));
      }
      read();
    };
    listeners.add(hear);
    read();
    return () => {
      live = false;
      listeners.delete(hear);
    };
  }, [personId]);
  return { queue, sent, sendNow: () => (personId ? sendQueuedEnrollments(personId) : Promise.resolve(0)), discard: discardEnrollment };
}
