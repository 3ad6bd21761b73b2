// What the console keeps on the phone (IndexedDB, through idb-keyval) so enrollment works without
// signal: enrollments waiting to be sent, and the sites the person may enroll at. Each is kept per
// person, so a phone shared by two integrators never sends one's enrollment as the other.
// The store is opened on first use only: nothing here touches IndexedDB when the module loads.
import { createStore, del, entries, get, set, type UseStore } from 'idb-keyval';
import type { EnrollInput, Lookup } from './loggers';
import type { Site } from './sites';

let store: UseStore | null = null;
const phone = () => (store ??= createStore('heliodor-phone', 'keyval'));

/** True where the browser keeps IndexedDB (every browser the console supports; not server-side rendering). */
export const phoneStoreAvailable = () => typeof indexedDB !== 'undefined';

export type QueueState =
  /** Not sent yet: the phone had no connection, or lost it while sending. */
  | 'waiting'
  /** The server enrolled it; the install photo is still to be sent. */
  | 'photo'
  /** The server refused it (or its photo): shown with the server's reason until discarded. */
  | 'refused';

export type QueuedEnrollment = {
  /** The enrollment id the server knows it by (a UUID made when Enroll was pressed). */
  id: string;
  personId: string;
  savedAt: string;
  body: EnrollInput & { enrollmentId: string };
  logger: Pick<Lookup['logger'], 'id' | 'serial' | 'modelName' | 'board'>;
  siteName: string;
  photo: Blob | null;
  photoName: string | null;
  state: QueueState;
  /** The server's answer when it refused: problem+json title and detail (RFC 9457). */
  problem: { status: number; title: string; detail: string } | null;
  /** Set once the server enrolled it (a photo may still be on its way). */
  enrolledLoggerId: string | null;
};

const queueKey = (id: string) => `enrollment:${id}`;
const sitesKey = (personId: string) => `sites:${personId}`;

export async function queuedEnrollments(personId: string): Promise<QueuedEnrollment[]> {
  if (!phoneStoreAvailable()) return [];
  const all = await entries<string, QueuedEnrollment>(phone());
  return all
    .filter(([key, value]) => key.startsWith('enrollment:') && value.personId === personId)
    .map(([, value]) => value)
    .sort((a, b) => a.savedAt.localeCompare(b.savedAt));
}

export const keepEnrollment = (entry: QueuedEnrollment) => set(queueKey(entry.id), entry, phone());
export const forgetEnrollment = (id: string) => del(queueKey(id), phone());

export type SitesOnPhone = { rows: Site[]; savedAt: string };

export async function keepSites(personId: string, rows: Site[]): Promise<void> {
  if (!phoneStoreAvailable()) return;
  await set(sitesKey(personId), { rows, savedAt: new Date().toISOString() } satisfies SitesOnPhone, phone());
}

export async function sitesOnPhone(personId: string): Promise<SitesOnPhone | null> {
  if (!phoneStoreAvailable()) return null;
  return (await get<SitesOnPhone>(sitesKey(personId), phone())) ?? null;
}
