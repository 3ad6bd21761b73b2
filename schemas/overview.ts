import { z } from 'zod';

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
  recentActivity: z.array(
    z.object({ id: z.number(), at: z.string(), actorName: z.string(), action: z.string(), summary: z.string() }),
  ),
});
export type Overview = z.infer<typeof overviewSchema>;
