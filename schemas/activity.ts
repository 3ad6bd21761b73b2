// The activity log: who did what to which thing, as GET /api/activity answers it.

/** Who acted: a person, an API token, a logger (its check-ins and reports) or Heliodor itself. */
export type ActorType = 'person' | 'token' | 'logger' | 'system';

/** One row of GET /api/activity (newest first; the cursor is the last row's id). */
export type ActivityView = {
  id: number;
  at: string;
  actorType: ActorType;
  actorId: string | null;
  actorName: string;
  action: string;
  targetType: string;
  targetId: string | null;
  summary: string;
  requestId: string | null;
  details: Record<string, unknown> | null;
};
