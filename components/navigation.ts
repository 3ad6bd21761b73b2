// The console's destinations. Each issue adds its screens here; the shell shows what a role may open.
import type { Role } from '../schemas/auth';
import type { IconName } from './icons';

export type Destination = {
  href: string;
  label: string;
  icon: IconName;
  roles: readonly Role[];
  /** On phones, shown in the bottom tab bar (at most five); the rest live under More. */
  tab?: boolean;
  /** Only outside production (the dev mailbox). */
  devOnly?: boolean;
};

const everyone: readonly Role[] = ['admin', 'release_engineer', 'integrator', 'support'];

export const destinations: Destination[] = [
  { href: '/', label: 'Overview', icon: 'overview', roles: everyone, tab: true },
  { href: '/loggers', label: 'Loggers', icon: 'loggers', roles: everyone, tab: true },
  { href: '/releases', label: 'Releases', icon: 'releases', roles: ['admin', 'release_engineer', 'support'], tab: true },
  { href: '/enroll', label: 'Enroll', icon: 'enroll', roles: ['admin', 'integrator'], tab: true },
  { href: '/lagging', label: 'Lagging sites', icon: 'lagging', roles: ['admin', 'release_engineer', 'support'] },
  { href: '/fleet/versions', label: 'Versions', icon: 'releases', roles: everyone },
  { href: '/sites', label: 'Sites', icon: 'sites', roles: everyone },
  { href: '/models', label: 'Models', icon: 'models', roles: everyone },
  { href: '/activity', label: 'Activity', icon: 'activity', roles: ['admin', 'release_engineer', 'support'] },
  { href: '/keys', label: 'Signing keys', icon: 'keys', roles: ['admin', 'release_engineer'] },
  { href: '/tokens', label: 'API tokens', icon: 'settings', roles: ['admin'] },
  { href: '/team', label: 'Team', icon: 'team', roles: ['admin'] },
  { href: '/account', label: 'Account', icon: 'account', roles: everyone },
  { href: '/settings/device-api', label: 'Settings · Device API', icon: 'settings', roles: everyone },
  { href: '/mailbox', label: 'Mailbox', icon: 'mail', roles: ['admin'], devOnly: true },
];

export function destinationsFor(role: Role) {
  return destinations.filter((d) => d.roles.includes(role));
}

/** Whether a destination is the current page (the overview only on an exact match). */
export function isCurrent(href: string, pathname: string) {
  return href === '/' ? pathname === '/' : pathname === href || pathname.startsWith(href + '/');
}
