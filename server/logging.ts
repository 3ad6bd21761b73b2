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
