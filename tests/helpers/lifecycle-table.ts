// The release lifecycle's complete table as the product specifies it (docs/PRODUCT.md, "The life of a
// release"), written out by hand once for every test that checks the code against it: the actions a
// release in each state allows.
import type { ReleaseAction, ReleaseState } from '../../schemas/words';

export const ALLOWED_ACTIONS: Record<ReleaseState, readonly ReleaseAction[]> = {
  draft: ['start_pilot'],
  pilot: ['widen', 'complete', 'pause', 'stop', 'withdraw'],
  widening: ['widen', 'complete', 'pause', 'stop', 'withdraw'],
  complete: ['pause', 'stop', 'withdraw'],
  paused: ['resume', 'stop', 'withdraw'],
  stopped: ['resume', 'withdraw'],
  withdrawn: [],
};
