// Password hashing with bcrypt (bcryptjs), in a pool of worker threads (piscina): a bcrypt at cost 12
// takes hundreds of milliseconds of CPU, which on the event loop would hold up every other request.
import os from 'node:os';
import path from 'node:path';
import crypto from 'node:crypto';
import { Piscina } from 'piscina';

/** OWASP Password Storage Cheat Sheet: bcrypt work factor 10 or more (docs/SOURCES.md §12). */
export const bcryptCost = (production: boolean) => (production ? 12 : 10);

type Task = { op: 'hash'; password: string; cost: number } | { op: 'compare'; password: string; hash: string };

let pool: Piscina | null = null;

function workers(): Piscina {
  pool ??= new Piscina({
    filename: path.join(__dirname, 'hash-worker.js'),
    // Leave one core to the event loop; idle threads exit, so a quiet console holds none.
    minThreads: 0,
    maxThreads: Math.max(1, (os.availableParallelism?.() ?? os.cpus().length) - 1),
    idleTimeout: 30_000,
  });
  return pool;
}

/** Counts the bcrypt operations by cost, so tests can prove two paths do the same work. */
export const passwordWork = { compares: new Map<number, number>(), hashes: new Map<number, number>() };
const bump = (m: Map<number, number>, cost: number) => m.set(cost, (m.get(cost) ?? 0) + 1);

export function hashPassword(password: string, cost: number): Promise<string> {
  bump(passwordWork.hashes, cost);
  return workers().run({ op: 'hash', password, cost } satisfies Task);
}

export function checkPassword(password: string, hash: string): Promise<boolean> {
  bump(passwordWork.compares, costOf(hash));
  return workers().run({ op: 'compare', password, hash } satisfies Task);
}

/** The work factor written in a bcrypt hash ("$2b$12$…" → 12). */
export function costOf(hash: string): number {
  const m = /^\$2[abxy]\$(\d{2})\$/.exec(hash);
  return m ? Number(m[1]) : NaN;
}

const decoys = new Map<number, Promise<string>>();

/**
 * A hash of a random password at the given cost, compared against when the e-mail is unknown (or the
 * person has no password yet), so that path costs exactly what a real person's does: no account
 * discovery by timing. Computed once per cost; call it at start-up so the first unknown address is not slower.
 */
export function decoyHash(cost: number): Promise<string> {
  let d = decoys.get(cost);
  if (!d) {
    d = hashPassword(crypto.randomBytes(18).toString('base64url'), cost);
    decoys.set(cost, d);
  }
  return d;
}

/** Stops the worker threads (tests and shutdown); the next hash starts them again. */
export async function stopPasswordWorkers() {
  const p = pool;
  pool = null;
  // A decoy still being computed is refused by destroy(); nobody waits for it any more, so its
  // refusal is expected and must not surface as an unhandled rejection.
  for (const d of decoys.values()) d.catch(() => undefined);
  decoys.clear();
  await p?.destroy();
}
