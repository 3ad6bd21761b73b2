// The single error middleware: every failure leaves as RFC 9457 problem+json, never a stack trace.
import type { ErrorRequestHandler } from 'express';
import { z } from 'zod';
import { BaseError, ConnectionError, UniqueConstraintError, ValidationError as SequelizeValidationError, TimeoutError } from 'sequelize';
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
  // multer errors
  if (e?.code === 'LIMIT_FILE_SIZE') return problems.tooLarge(`The file in "${e.field}" is larger than allowed.`);
  if (typeof e?.code === 'string' && e.code.startsWith('LIMIT_'))
    return problems.badRequest(`The upload is not acceptable (${e.code.toLowerCase().replace(/_/g, ' ')}).`,
      e.field ? [{ path: e.field, message: 'not accepted here' }] : undefined);
  if (err instanceof Error && /Unexpected end of form|Multipart: Boundary not found|Malformed part header/i.test(err.message))
    return problems.badRequest('The upload was cut short or is not valid multipart/form-data.');
  if (err instanceof UniqueConstraintError) {
    const fields = Object.keys(err.fields ?? {});
    return problems.conflict(`That ${fields.join(', ') || 'value'} is already taken.`);
  }
  if (err instanceof SequelizeValidationError)
    return problems.badRequest('Check the highlighted fields.', err.errors.map((x) => ({ path: x.path ?? '', message: x.message })));
  if (err instanceof ConnectionError || err instanceof TimeoutError || isPoolTimeout(err))
    return problems.unavailable('The database is not reachable right now; retry shortly.', 15);
  if (err instanceof BaseError && /connect|ECONNREFUSED|terminat/i.test(err.message))
    return problems.unavailable('The database is not reachable right now; retry shortly.', 15);
  if (typeof e?.status === 'number' && e.status >= 400 && e.status < 500 && e.expose)
    return new Problem(e.status, 'invalid-request', 'The request is not valid', (err as Error).message);
  return new Problem(500, 'internal', 'Something went wrong', 'An unexpected error happened; it has been logged.');
}

function isPoolTimeout(err: unknown): boolean {
  return err instanceof Error && (err.name === 'SequelizeConnectionAcquireTimeoutError' || /ECONNREFUSED|Connection terminated/.test(err.message));
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
