// Sites: where loggers are installed. Shapes shared by the console API and the client.
import { z } from 'zod';
import { text, uuid } from './common';

/** An IANA time zone name the runtime knows (checked with Intl, so the server and the browser agree). */
export function isTimeZone(name: string): boolean {
  if (name.trim() === '' || name !== name.trim()) return false;
  try {
    new Intl.DateTimeFormat('en', { timeZone: name });
    return true;
  } catch {
    return false;
  }
}

export const timeZone = z
  .string({ message: 'is required' })
  .trim()
  .min(1, 'is required')
  .max(64, 'at most 64 characters')
  .refine((name) => name === '' || isTimeZone(name), 'must be an IANA time zone such as Europe/London')
  // Intl accepts any capitalisation; keep the canonical spelling ("europe/london" → "Europe/London").
  .transform((name) => (isTimeZone(name) ? new Intl.DateTimeFormat('en', { timeZone: name }).resolvedOptions().timeZone : name));

export const latitude = z.number({ message: 'must be a number' }).min(-90, 'must be between -90 and 90').max(90, 'must be between -90 and 90');
export const longitude = z.number({ message: 'must be a number' }).min(-180, 'must be between -180 and 180').max(180, 'must be between -180 and 180');

const integratorIds = z.array(uuid).max(20, 'at most 20 integrators').transform((ids) => [...new Set(ids)]);

const siteFields = {
  name: text(120),
  customer: text(120),
  address: text(300),
  latitude: latitude.nullable().optional(),
  longitude: longitude.nullable().optional(),
  timeZone,
  /** The site's lowest expected ambient temperature, °C: the wiring check allows for the panel voltage rise in the cold. */
  minTempC: z.number({ message: 'must be a number' }).min(-60, 'must be between -60 and 50 °C').max(50, 'must be between -60 and 50 °C').nullable().optional(),
  notes: z.string().trim().max(2000, 'at most 2000 characters').optional(),
  integratorIds: integratorIds.optional(),
};

/** Coordinates come in pairs: the daylight window needs both. */
function bothOrNeither(body: { latitude?: number | null; longitude?: number | null }, ctx: z.RefinementCtx) {
  const hasLat = body.latitude !== undefined && body.latitude !== null;
  const hasLong = body.longitude !== undefined && body.longitude !== null;
  if (hasLat && !hasLong) ctx.addIssue({ code: 'custom', path: ['longitude'], message: 'give the longitude too, or neither' });
  if (hasLong && !hasLat) ctx.addIssue({ code: 'custom', path: ['latitude'], message: 'give the latitude too, or neither' });
}

export const createSiteRequest = z.object(siteFields).superRefine(bothOrNeither);
export type CreateSiteRequest = z.infer<typeof createSiteRequest>;

/** Partial; the service checks the coordinate pair again on the merged site. */
export const updateSiteRequest = z
  .object(siteFields)
  .partial()
  .refine((body) => Object.values(body).some((v) => v !== undefined), 'change at least one field');
export type UpdateSiteRequest = z.infer<typeof updateSiteRequest>;

export const sitesQuery = z.object({ q: z.string().trim().max(100).optional() });

/** What a person may do with a site (its answers' `can`, from server/auth/policies.ts); enroll covers moving loggers there too. */
export const SITE_VERBS = ['edit', 'assignIntegrators', 'addNote', 'enroll'] as const;
export type SiteVerb = (typeof SITE_VERBS)[number];
export type SiteCan = Record<SiteVerb, boolean>;

export type SiteView = {
  id: string;
  name: string;
  customer: string;
  address: string;
  latitude: number | null;
  longitude: number | null;
  timeZone: string;
  /** Lowest expected ambient temperature, °C, or null when not known. */
  minTempC: number | null;
  notes: string;
  integratorIds: string[];
  integrators: { id: string; name: string }[];
  /** Loggers at this site that are not retired. */
  loggerCount: number;
  createdAt: string;
  can: SiteCan;
};
