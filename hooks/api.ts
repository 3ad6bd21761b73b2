// The one typed fetch client: same-origin, cookie session, CSRF header on every request,
// problem+json (RFC 9457) turned into an ApiError with title, detail and field errors.
import type { z } from 'zod';
import type { Problem } from '../schemas/common';
import { reportServerReached } from './online';

const base = process.env.EXPO_PUBLIC_API_URL ?? '';

export class ApiError extends Error {
  readonly status: number;
  readonly title: string;
  readonly detail: string;
  readonly fieldErrors: { path: string; message: string; line?: number }[];

  constructor(status: number, problem: Partial<Problem>) {
    super(problem.detail ?? problem.title ?? `Request failed (${status})`);
    this.status = status;
    this.title = problem.title ?? 'Request failed';
    this.detail = problem.detail ?? `The server answered ${status}.`;
    this.fieldErrors = problem.errors ?? [];
  }

  /** The message for one form field, if the server named it. */
  field(path: string): string | undefined {
    return this.fieldErrors.find((e) => e.path === path)?.message;
  }
}

export const networkError = () =>
  new ApiError(0, { title: 'No connection', detail: 'The console cannot reach the server. Check the connection and try again.' });

async function toError(res: Response): Promise<ApiError> {
  let problem: Partial<Problem> = {};
  try {
    problem = await res.json();
  } catch {
    problem = { title: res.statusText || 'Request failed', detail: `The server answered ${res.status}.` };
  }
  return new ApiError(res.status, problem);
}

type Options = { method?: string; body?: unknown; signal?: AbortSignal };

export async function api<T = unknown>(path: string, options: Options = {}, schema?: z.ZodType<T>): Promise<T> {
  const isForm = typeof FormData !== 'undefined' && options.body instanceof FormData;
  let res: Response;
  try {
    res = await fetch(base + path, {
      method: options.method ?? (options.body === undefined ? 'GET' : 'POST'),
      credentials: 'include',
      headers: {
        Accept: 'application/json, application/problem+json',
        'X-Requested-With': 'heliodor',
        ...(options.body !== undefined && !isForm ? { 'Content-Type': 'application/json' } : {}),
      },
      body: options.body === undefined ? undefined : isForm ? (options.body as FormData) : JSON.stringify(options.body),
      signal: options.signal,
    });
  } catch (err) {
    if ((err as Error)?.name === 'AbortError') throw err;
    reportServerReached(false);
    throw networkError();
  }
  reportServerReached(true);
  if (!res.ok) throw await toError(res);
  if (res.status === 204) return undefined as T;
  const data = await res.json();
  return schema ? schema.parse(data) : (data as T);
}

/** Multipart upload with progress (fetch has no upload progress; XMLHttpRequest does). */
export function upload<T = unknown>(path: string, form: FormData, onProgress?: (fraction: number) => void): Promise<T> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    xhr.open('POST', base + path);
    xhr.withCredentials = true;
    xhr.setRequestHeader('X-Requested-With', 'heliodor');
    xhr.setRequestHeader('Accept', 'application/json, application/problem+json');
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable && onProgress) onProgress(e.loaded / e.total);
    };
    xhr.onerror = () => reject(networkError());
    xhr.onload = () => {
      let body: unknown = null;
      try {
        body = xhr.responseText ? JSON.parse(xhr.responseText) : null;
      } catch {
        body = null;
      }
      if (xhr.status >= 200 && xhr.status < 300) resolve(body as T);
      else reject(new ApiError(xhr.status, (body as Partial<Problem>) ?? {}));
    };
    xhr.send(form);
  });
}

/** Builds a query string from defined values only. */
export function query(params: Record<string, string | number | boolean | undefined | null>): string {
  const entries = Object.entries(params).filter(([, v]) => v !== undefined && v !== null && v !== '');
  if (!entries.length) return '';
  return '?' + entries.map(([k, v]) => `${encodeURIComponent(k)}=${encodeURIComponent(String(v))}`).join('&');
}

/** Shared staleness constants for TanStack Query. */
export const STALE = { SECONDS: { THIRTY: 30_000 }, MINUTES: { ONE: 60_000, FIVE: 300_000 } } as const;
