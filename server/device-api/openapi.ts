// The device API as OpenAPI 3.1 (GET /api/device/v1/openapi.json), generated from the same zod schemas
// that validate requests (schemas/device.ts). Where DEVICE_API.md leaves a choice open, the choice is
// written here, in the document firmware developers read.
import { OpenAPIRegistry, OpenApiGeneratorV31 } from '@asteasolutions/zod-to-openapi';
import { z } from 'zod';
import { problemSchema } from '../../schemas/common';
import { checkInRequestSchema, checkInResponseSchema, deviceApiChoices } from '../../schemas/device';

/** The choices, kept beside the schemas so the console's Device API page shows the same list. */
export const DEVICE_API_CHOICES = deviceApiChoices;

let cached: ReturnType<OpenApiGeneratorV31['generateDocument']> | null = null;

export function deviceOpenApiDocument() {
  if (cached) return cached;
  const registry = new OpenAPIRegistry();
  const bearer = registry.registerComponent('securitySchemes', 'loggerToken', {
    type: 'http',
    scheme: 'bearer',
    bearerFormat: 'hlt_ followed by 43 base64url characters (32 random bytes)',
    description: 'The logger token from its label or bench sheet. Unknown, revoked or retired → 401.',
  });
  const problem = problemSchema.meta({ id: 'Problem', description: 'RFC 9457 problem details (application/problem+json).' });
  const problemContent = { 'application/problem+json': { schema: problem } };
  const retryAfter = { 'Retry-After': { description: 'Seconds to wait before trying again.', schema: { type: 'integer' as const } } };
  const security = [{ [bearer.name]: [] }];

  registry.registerPath({
    method: 'post',
    path: '/api/device/v1/check-in',
    summary: 'Check in: report state, receive the next check-in time, the measurement profile and the offer',
    security,
    request: { body: { required: true, content: { 'application/json': { schema: checkInRequestSchema } } } },
    responses: {
      200: { description: 'Checked in.', content: { 'application/json': { schema: checkInResponseSchema } } },
      400: { description: 'Not JSON, or a field with a wrong type or out of range; `errors` names each field.', content: problemContent },
      401: { description: 'No token, or unknown, revoked or retired.', content: problemContent },
      409: {
        description: 'The install report names a release not offered to this logger, nor the one it runs; nothing was recorded. Drop the report and check in again without it.',
        content: problemContent,
      },
      413: { description: 'The body is over 16 KiB.', content: problemContent },
      429: { description: 'More check-ins than the rate limit allows.', headers: retryAfter, content: problemContent },
      503: { description: 'Busy, or the database is unreachable.', headers: retryAfter, content: problemContent },
    },
  });

  const rangeHeaders = {
    'Accept-Ranges': { description: 'Always `bytes`.', schema: { type: 'string' as const } },
    ETag: { description: 'The image SHA-256 in hex, quoted (strong validator for If-Range).', schema: { type: 'string' as const } },
  };
  registry.registerPath({
    method: 'get',
    path: '/api/device/v1/images/{sha256}',
    summary: 'Download an offered image, resumable with Range and If-Range (RFC 9110)',
    security,
    request: {
      params: z.object({ sha256: z.string().meta({ description: 'The image SHA-256, 64 lowercase hex characters (anything else is 404).' }) }),
      headers: z.object({
        Range: z.string().optional().meta({ description: 'One range: `bytes=a-b`, `bytes=a-` or `bytes=-n`.' }),
        'If-Range': z.string().optional().meta({ description: 'The ETag received earlier; a different one yields the whole image.' }),
      }),
    },
    responses: {
      200: {
        description: 'The whole image (also when If-Range does not match or several ranges are asked for).',
        headers: rangeHeaders,
        content: { 'application/octet-stream': { schema: { type: 'string', format: 'binary' } } },
      },
      206: {
        description: 'The requested range.',
        headers: { ...rangeHeaders, 'Content-Range': { description: '`bytes a-b/size`.', schema: { type: 'string' } } },
        content: { 'application/octet-stream': { schema: { type: 'string', format: 'binary' } } },
      },
      401: { description: 'No token, or unknown, revoked or retired.', content: problemContent },
      404: { description: 'Not an image id, or not offered to this logger by a live release.', content: problemContent },
      416: {
        description: 'The range starts at or past the end of the image.',
        headers: { 'Content-Range': { description: '`bytes */size`.', schema: { type: 'string' } } },
        content: problemContent,
      },
      503: { description: 'The database is unreachable.', headers: retryAfter, content: problemContent },
    },
  });

  const generator = new OpenApiGeneratorV31(registry.definitions);
  cached = generator.generateDocument({
    openapi: '3.1.0',
    info: {
      title: 'Heliodor device API',
      version: '1.0.0',
      description:
        'The contract between Heliodor and logger firmware (version 1): check-in, offers and image downloads. ' +
        'Fields are only ever added, never renamed or removed; unknown request fields are ignored. ' +
        'All errors are application/problem+json (RFC 9457).\n\nChoices where the contract leaves room:\n\n' +
        DEVICE_API_CHOICES.map((c) => `- ${c}`).join('\n'),
    },
    servers: [{ url: '/' }],
  });
  return cached;
}
