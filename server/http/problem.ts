// One error shape for the whole API: RFC 9457 problem details.
export type FieldError = { path: string; message: string; line?: number };

export type ProblemBody = {
  type: string;
  title: string;
  status: number;
  detail: string;
  instance?: string;
  errors?: FieldError[];
  [extension: string]: unknown;
};

const typeBase = 'https://heliodor.example/problems/';

export class Problem extends Error {
  readonly status: number;
  readonly title: string;
  readonly detail: string;
  readonly type: string;
  readonly errors?: FieldError[];
  readonly headers: Record<string, string>;
  readonly extensions: Record<string, unknown>;

  constructor(
    status: number,
    slug: string,
    title: string,
    detail: string,
    options: { errors?: FieldError[]; headers?: Record<string, string>; extensions?: Record<string, unknown> } = {},
  ) {
    super(detail);
    this.status = status;
    this.type = typeBase + slug;
    this.title = title;
    this.detail = detail;
    this.errors = options.errors;
    this.headers = options.headers ?? {};
    this.extensions = options.extensions ?? {};
  }

  body(instance?: string): ProblemBody {
    return {
      type: this.type,
      title: this.title,
      status: this.status,
      detail: this.detail,
      ...(instance ? { instance } : {}),
      ...(this.errors ? { errors: this.errors } : {}),
      ...this.extensions,
    };
  }
}

export const problems = {
  badRequest: (detail: string, errors?: FieldError[]) =>
    new Problem(400, 'invalid-request', 'The request is not valid', detail, { errors }),
  unauthorized: (detail = 'Sign in to continue.') =>
    new Problem(401, 'unauthorized', 'Not signed in', detail, { headers: { 'WWW-Authenticate': 'Bearer' } }),
  forbidden: (detail = 'Your role does not allow this action.') =>
    new Problem(403, 'forbidden', 'Not allowed', detail),
  notFound: (what = 'resource', detail?: string) =>
    new Problem(404, 'not-found', 'Not found', detail ?? `No such ${what}.`),
  conflict: (detail: string, extensions?: Record<string, unknown>) =>
    new Problem(409, 'conflict', 'Conflict', detail, { extensions }),
  tooLarge: (detail: string) => new Problem(413, 'too-large', 'Request too large', detail),
  unprocessable: (detail: string, errors?: FieldError[]) =>
    new Problem(422, 'unprocessable', 'The content cannot be accepted', detail, { errors }),
  tooManyRequests: (retryAfterS: number) =>
    new Problem(429, 'rate-limited', 'Too many requests', `Slow down and retry after ${retryAfterS} s.`, {
      headers: { 'Retry-After': String(retryAfterS) },
    }),
  unavailable: (detail: string, retryAfterS = 30) =>
    new Problem(503, 'unavailable', 'Service unavailable', detail, { headers: { 'Retry-After': String(retryAfterS) } }),
};
