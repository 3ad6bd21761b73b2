// The single error middleware: every failure leaves as RFC 9457 problem+json, never a stack trace.
import type { ErrorRequestHandler } from 'express';
import { z } from 'zod';
import { ConnectionError, DatabaseError, UniqueConstraintError, ValidationError as SequelizeValidationError, TimeoutError } from 'sequelize';
import { Problem, problems } from './problem';
import { fieldErrors } from './validate';

function toProblem(err: unknown): Problem {
  if (err instanceof Problem) return err;
  if (err instanceof z.ZodError) return problems.badRequest('Check the highlighted fields.', fieldErrors(err));
  const e = err as { type?: string; status?: number; code?: string; field?: string; expose?: boolean };
  // body-parser errors
  if (e?.type === 'entity.parse.failed') return problems.badRequest('The body is not valid JSON.');
  if (e?.type === 'entity.too.large') return problems.tooLarge('The request body is larger than this endpoint accepts.');
  if (e?.type === 'encoding.unsupported' || e?.type === 'charset.unsupported')
    return problems.badRequest('Unsupported body encoding; send UTF-8 JSON.');
  // The router could not percent-decode a path parameter (its URIError carries status 400 but is not
  // marked for exposure): percent-encoded octets that are not UTF-8 are the request's fault (RFC 3986 §2.5).
  // The detail does not repeat the path.
  if (err instanceof URIError && e.status === 400) return problems.badRequest('A percent-encoded part of the path is not valid UTF-8.');
  // multer errors
  if (e?.code === 'LIMIT_FILE_SIZE') return problems.tooLarge(`The file in "${e.field}" is larger than allowed.`);
  if (typeof e?.code === 'string' && e.code.startsWith('LIMIT_'))
    return problems.badRequest(`The upload is not acceptable (${e.code.toLowerCase().replace(/_/g, ' ')}).`,
      e.field ? [{ path: e.field, message: 'not accepted here' }] : undefined);
  if (err instanceof Error && /Unexpected end of form|Multipart: Boundary not found|Malformed part header/i.test(err.message))
    return problems.badRequest('The upload was cut short or is not valid multipart/form-data.');
  const database = databaseProblem(err);
  if (database) return database;
  if (typeof e?.status === 'number' && e.status >= 400 && e.status < 500 && e.expose)
    return new Problem(e.status, 'invalid-request', 'The request is not valid', (err as Error).message);
  return new Problem(500, 'internal', 'Something went wrong', 'An unexpected error happened; it has been logged.');
}

const unreachable = () => problems.unavailable('The database is not reachable right now; retry shortly.', 15);

/** SQLSTATE classes are two digits or one of F0, HV, P0, XX; so Node's own codes (EPIPE, EPERM) are not taken for one. */
const SQLSTATE = /^([0-9]{2}|F0|HV|P0|XX)[0-9A-Z]{3}$/;

/** The SQLSTATE PostgreSQL gave (five characters, PostgreSQL manual Appendix A), wherever the driver put it. */
export function sqlStateOf(err: unknown): string | undefined {
  const e = err as { code?: unknown; parent?: { code?: unknown }; original?: { code?: unknown } } | null;
  for (const code of [e?.parent?.code, e?.original?.code, e?.code]) {
    if (typeof code === 'string' && SQLSTATE.test(code)) return code;
  }
  return undefined;
}

/**
 * A database failure as a problem, classified by SQLSTATE (PostgreSQL manual, Appendix A "PostgreSQL
 * Error Codes") and by the driver's error class — never by message text, which may echo the request:
 * - class 08 (connection exception), 57P01 admin_shutdown, 57P02 crash_shutdown, 57P03 cannot_connect_now,
 *   53300 too_many_connections, and class 40's 40001 serialization_failure and 40P01 deadlock_detected (the
 *   transaction was rolled back whole and may simply be sent again) → 503 with Retry-After;
 * - 22003 numeric_value_out_of_range, 22P02 invalid_text_representation and the other data exceptions a
 *   value from a request can cause (22001 string too long, 22007/22008 bad or overflowing date and time,
 *   22021 a character the encoding refuses) → 400;
 * - 23505 unique_violation → 409;
 * - no SQLSTATE at all: the driver could not reach or lost the server (Sequelize's ConnectionError family,
 *   a pool that found no free connection in time, a query whose connection ended under it) → 503.
 * Anything else stays a 500.
 */
function databaseProblem(err: unknown): Problem | undefined {
  if (err instanceof SequelizeValidationError && !(err instanceof UniqueConstraintError))
    return problems.badRequest('Check the highlighted fields.', err.errors.map((x) => ({ path: x.path ?? '', message: x.message })));
  const state = sqlStateOf(err);
  if (state) {
    if (state.startsWith('08') || ['57P01', '57P02', '57P03', '53300', '40001', '40P01'].includes(state)) return unreachable();
    if (['22001', '22003', '22007', '22008', '22021', '22P02'].includes(state))
      return problems.badRequest('A value in the request is out of range or not in the form expected; check the values sent.');
    if (state === '23505') {
      const fields = err instanceof UniqueConstraintError ? Object.keys(err.fields ?? {}) : [];
      return problems.conflict(`That ${fields.join(', ') || 'value'} is already taken.`);
    }
    return undefined;
  }
  if (err instanceof ConnectionError || err instanceof TimeoutError || (err instanceof Error && err.name === 'SequelizeConnectionAcquireTimeoutError')) return unreachable();
  // Every error the server reports carries a SQLSTATE; a query error without one is the driver losing its connection.
  if (err instanceof DatabaseError) return unreachable();
  return undefined;
}

export const errorHandler: ErrorRequestHandler = (err, req, res, _next) => {
  const problem = toProblem(err);
  const requestId = String(req.id ?? '');
  if (problem.status >= 500) {
    req.log?.error({ err, requestId }, 'request failed');
  }
  if (res.headersSent) {
    res.destroy();
    return;
  }
  for (const [name, value] of Object.entries(problem.headers)) res.setHeader(name, value);
  const body = problem.body(req.originalUrl);
  if (problem.status >= 500) body.requestId = requestId;
  res.status(problem.status).type('application/problem+json').send(JSON.stringify(body));
};
