// The server's log as a person and a log collector read it (server/logging.ts). Sources: JSON lines,
// one JSON text (RFC 8259) per line; pino's numeric levels (30 info, 40 warn, 20 debug, from pino's
// documentation); pino-http's "request completed" line with req, res and responseTime.
import { Writable } from 'node:stream';
import { createLogger, requestLogLevel } from '../../server/logging';

function capture() {
  const lines: string[] = [];
  const stream = new Writable({
    write(chunk, _encoding, callback) {
      lines.push(...String(chunk).split('\n').filter(Boolean));
      callback();
    },
  });
  return { lines, stream };
}

const request = { req: { id: 'r1', method: 'POST', url: '/api/device/v1/check-in', headers: {} }, res: { statusCode: 200, headers: {} }, responseTime: 12.4 };

describe('the log for people (pretty)', () => {
  test('when a start-up step is logged at the default level, then it is one readable line with the time, the level and the message, not JSON', () => {
    const { lines, stream } = capture();
    createLogger({ level: 'info', format: 'pretty' }, stream).info('seeding the demo scenario');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/^\[\d\d:\d\d:\d\d\] INFO: seeding the demo scenario$/);
  });

  test('when requests are logged at debug and the level is the default info, then none reaches the terminal', () => {
    const { lines, stream } = capture();
    const logger = createLogger({ level: 'info', format: 'pretty' }, stream);
    for (let i = 0; i < 50; i++) logger.debug(request, 'request completed');
    logger.warn('mail fake not started on port 2525');
    expect(lines).toEqual([expect.stringMatching(/WARN: mail fake not started on port 2525$/)]);
  });

  test('when the level is debug, then a request reads as one line: method, path, status and time', () => {
    const { lines, stream } = capture();
    createLogger({ level: 'debug', format: 'pretty' }, stream).debug(request, 'request completed');
    expect(lines).toEqual([expect.stringMatching(/DEBUG: POST \/api\/device\/v1\/check-in 200 12 ms$/)]);
  });
});

describe('the log for collectors (json)', () => {
  test('when events are logged, then each is one line holding one JSON text with the numeric level and the message (RFC 8259, pino levels)', () => {
    const { lines, stream } = capture();
    const logger = createLogger({ level: 'info', format: 'json' }, stream);
    logger.info({ url: 'http://127.0.0.1:8080' }, 'Heliodor ready at http://127.0.0.1:8080');
    logger.warn('waiting for the database…');
    expect(lines).toHaveLength(2);
    const [ready, waiting] = lines.map((l) => JSON.parse(l));
    expect(ready).toMatchObject({ level: 30, msg: 'Heliodor ready at http://127.0.0.1:8080', url: 'http://127.0.0.1:8080' });
    expect(waiting).toMatchObject({ level: 40, msg: 'waiting for the database…' });
  });
});

describe('the level of a request line', () => {
  const res = (statusCode: number) => ({ statusCode }) as never;
  test('when a request succeeds or is refused, then it is debug outside production and info in production', () => {
    expect(requestLogLevel(false)({} as never, res(200))).toBe('debug');
    expect(requestLogLevel(false)({} as never, res(401))).toBe('debug');
    expect(requestLogLevel(true)({} as never, res(200))).toBe('info');
  });

  test('when a request fails on the server, then it is an error everywhere', () => {
    expect(requestLogLevel(false)({} as never, res(503))).toBe('error');
    expect(requestLogLevel(true)({} as never, res(200), new Error('boom'))).toBe('error');
  });
});
