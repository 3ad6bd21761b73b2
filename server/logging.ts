// The server's log. Outside production a person reads it on the terminal `npm start` leaves open:
// pino-pretty lines ("12:04:31 INFO: seeding the demo scenario"), quiet by default (start-up steps,
// warnings, errors; requests only at debug, since the living demo checks in every second or so). In
// production each event is one JSON line for log collectors, requests included (at info).
import type { IncomingMessage, ServerResponse } from 'node:http';
import pino, { type Logger, type LevelWithSilent } from 'pino';
import pretty from 'pino-pretty';

export type LogSettings = { level: LevelWithSilent; format: 'pretty' | 'json' };

/** One request as pino-http logs it, in a line: "POST /api/device/v1/check-in 200 12 ms". */
function requestLine(log: Record<string, unknown>, messageKey: string): string {
  const req = log.req as { method?: string; url?: string } | undefined;
  const res = log.res as { statusCode?: number } | undefined;
  const message = String(log[messageKey] ?? '');
  if (!req?.method) return message;
  const took = typeof log.responseTime === 'number' ? ` ${Math.round(log.responseTime)} ms` : '';
  const status = res?.statusCode ? ` ${res.statusCode}` : '';
  return message === 'request completed' ? `${req.method} ${req.url}${status}${took}` : `${message} (${req.method} ${req.url}${status})`;
}

/** The logger for the settings; `destination` replaces standard output (tests capture it). */
export function createLogger(settings: LogSettings, destination?: NodeJS.WritableStream): Logger {
  const options = { level: settings.level };
  if (settings.format === 'json') return destination ? pino(options, destination) : pino(options);
  return pino(
    options,
    pretty({
      destination: destination ?? 1,
      sync: true,
      colorize: destination ? false : Boolean(process.stdout.isTTY),
      translateTime: 'SYS:HH:MM:ss',
      ignore: 'pid,hostname,req,res,responseTime,reqId',
      messageFormat: requestLine,
    }),
  );
}

/**
 * The level of a request's log line (pino-http customLogLevel): failures are errors; the rest is
 * info in production (the access log collectors keep) and debug elsewhere (off the terminal).
 */
export function requestLogLevel(production: boolean) {
  return (_req: IncomingMessage, res: ServerResponse, err?: Error): 'error' | 'info' | 'debug' =>
    err || res.statusCode >= 500 ? 'error' : production ? 'info' : 'debug';
}

// ─── Credentials never reach the log ────────────────────────────────────────
// A logger label's link carries its token in the query (`/enroll?t=hlt_…`), an API token may arrive in
// a query by mistake, and browsers repeat a page's address in Referer. URIs end up in logs (RFC 9110
// §17.9), so every logged URL, query and header is scrubbed: query values under a credential's name,
// anything shaped like a Heliodor token (hlt_… logger tokens, hat_… API tokens) wherever it stands,
// and the credential headers whole.

/** Query parameters that carry a credential: the label link's `t`, and any token, invitation or reset code. */
const credentialParams = /^(t|token|access_token|api_token|key|code|invite|invitation|invitation_token|reset|reset_token|password)$/i;
/** A Heliodor token in any text: its prefix, the underscore and its characters (base64url). */
const tokenText = /\b(hlt|hat)_[A-Za-z0-9_-]+/g;
const redacted = '[redacted]';
/** Headers that are credentials through and through. */
const credentialHeaders = new Set(['authorization', 'cookie', 'set-cookie', 'proxy-authorization']);

/** Text with every Heliodor token replaced by its prefix and "[redacted]". */
export function redactTokens(text: string): string {
  return text.replace(tokenText, (_m, prefix: string) => `${prefix}_${redacted}`);
}

/** A URL (absolute or a path with its query) with credentials in its query and any token text replaced. */
export function redactUrl(url: string): string {
  const q = url.indexOf('?');
  if (q === -1) return redactTokens(url);
  const hash = url.indexOf('#', q);
  const query = url.slice(q + 1, hash === -1 ? undefined : hash);
  const pairs = query.split('&').map((pair) => {
    const eq = pair.indexOf('=');
    if (eq === -1) return redactTokens(pair);
    let name = pair.slice(0, eq);
    try {
      name = decodeURIComponent(name.replace(/\+/g, ' '));
    } catch {
      // an undecodable name is judged as written
    }
    return credentialParams.test(name) ? `${pair.slice(0, eq)}=${redacted}` : redactTokens(pair);
  });
  return `${redactTokens(url.slice(0, q))}?${pairs.join('&')}`;
}

function redactValue(name: string, value: unknown): unknown {
  if (credentialParams.test(name)) return redacted;
  if (typeof value === 'string') return redactTokens(value);
  if (Array.isArray(value)) return value.map((v) => redactValue(name, v));
  if (value && typeof value === 'object') return redactQuery(value as Record<string, unknown>);
  return value;
}

/** A parsed query with credential parameters and token text replaced. */
export function redactQuery(query: Record<string, unknown>): Record<string, unknown> {
  return Object.fromEntries(Object.entries(query).map(([name, value]) => [name, redactValue(name, value)]));
}

/** Request or response headers with the credential headers replaced and token text (e.g. in Referer) scrubbed. */
export function redactHeaders(headers: Record<string, unknown>): Record<string, unknown> {
  return Object.fromEntries(
    Object.entries(headers).map(([name, value]) => {
      if (credentialHeaders.has(name.toLowerCase())) return [name, redacted];
      if (name.toLowerCase() === 'referer' && typeof value === 'string') return [name, redactUrl(value)];
      if (typeof value === 'string') return [name, redactTokens(value)];
      if (Array.isArray(value)) return [name, value.map((v) => (typeof v === 'string' ? redactTokens(v) : v))];
      return [name, value];
    }),
  );
}

type LoggedRequest = { url?: unknown; query?: unknown; headers?: unknown; params?: unknown } & Record<string, unknown>;

/**
 * pino-http serializers: what a request or response line records, credentials scrubbed. They receive
 * pino's standard serialization (method, url, query, params, headers, remote address).
 */
export const requestSerializers = {
  req(req: LoggedRequest) {
    return {
      ...req,
      ...(typeof req.url === 'string' ? { url: redactUrl(req.url) } : {}),
      ...(req.query && typeof req.query === 'object' ? { query: redactQuery(req.query as Record<string, unknown>) } : {}),
      ...(req.params && typeof req.params === 'object' ? { params: redactQuery(req.params as Record<string, unknown>) } : {}),
      ...(req.headers && typeof req.headers === 'object' ? { headers: redactHeaders(req.headers as Record<string, unknown>) } : {}),
    };
  },
  res(res: { headers?: unknown } & Record<string, unknown>) {
    return res.headers && typeof res.headers === 'object' ? { ...res, headers: redactHeaders(res.headers as Record<string, unknown>) } : res;
  },
};
