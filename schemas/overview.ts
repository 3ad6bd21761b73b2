import { z } from 'zod';
import { CHANNELS, FLEET_FLAGS, RELEASE_STATES } from './words';

export const overviewSchema = z.object({
  loggers: z.object({
    total: z.number().int(),
    registered: z.number().int(),
    enrolled: z.number().int(),
    online: z.number().int(),
    silent: z.number().int(),
    retired: z.number().int(),
  }),
  sites: z.number().int(),
  models: z.number().int(),
  people: z.number().int(),
  /** Fleet health for support and release steering; each href opens the filtered view. */
  fleet: z.object({
    silent: z.object({ count: z.number().int(), href: z.string() }),
    flags: z.array(z.object({ flag: z.enum(FLEET_FLAGS), count: z.number().int(), href: z.string() })),
    /** From the lagging summary: `asOf` when it was last caught up, `ageS` how many seconds before this answer. */
    laggingSites: z.object({ count: z.number().int(), href: z.string(), asOf: z.string().nullable(), ageS: z.number().int().nullable() }),
    liveReleases: z.array(
      z.object({
        id: z.string(),
        modelName: z.string(),
        version: z.string(),
        channel: z.enum(CHANNELS),
        state: z.enum(RELEASE_STATES),
        share: z.number(),
        installed: z.number().int(),
        failed: z.number().int(),
        href: z.string(),
      }),
    ),
  }),
  /** Null for people who may not read the activity log (server/auth/policies.ts). */
  recentActivity: z
    .array(z.object({ id: z.number(), at: z.string(), actorName: z.string(), action: z.string(), summary: z.string() }))
    .nullable(),
});
export type Overview = z.infer<typeof overviewSchema>;
