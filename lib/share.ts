// The rollout share a widen may ask for, shared by the release lifecycle table on the server, which
// refuses anything else, and the release screen, which says so before the request is sent.
// 0 % is a pilot (pilot sites only) and 100 % is complete, each an action of its own, so widen lies between.

/** The smallest share, in percent, a widen may ask for. */
export const MIN_WIDEN_SHARE = 1;
/** The largest share, in percent, a widen may ask for; 100 % is the complete action. */
export const MAX_WIDEN_SHARE = 99;
