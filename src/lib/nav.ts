import type { Role } from '@shared/domain';
import type { ServerFeatures } from '@shared/schemas/auth';
import type { IconName } from '@/components/AppIcon.vue';

export interface NavItem {
  name: string;
  label: string;
  icon: IconName;
  roles?: readonly Role[];
  /** Shown in the phone's bottom bar (the rest go in "More"). */
  primary?: boolean;
  /** Only when the server offers this feature (sign-in / `GET /auth/me` answer). */
  feature?: keyof ServerFeatures;
}
export interface NavGroup {
  label: string | null;
  items: NavItem[];
}

export const NAV: NavGroup[] = [
  {
    label: null,
    items: [
      { name: 'fleet', label: 'Fleet', icon: 'fleet', primary: true },
      { name: 'alarms', label: 'Alarms', icon: 'caution', primary: true },
    ],
  },
  {
    label: 'Field tools',
    items: [
      { name: 'tool-pt', label: 'P–T calculator', icon: 'gauge', primary: true },
      { name: 'tool-superheat', label: 'Superheat', icon: 'thermometer', primary: true },
    ],
  },
  {
    label: 'Records',
    items: [
      { name: 'visits', label: 'Service visits', icon: 'wrench' },
      { name: 'refrigerant-log', label: 'Refrigerant log', icon: 'gauge' },
      { name: 'food-log', label: 'Food-safety log', icon: 'thermometer' },
      { name: 'trends', label: 'Trends', icon: 'drift' },
    ],
  },
  {
    label: 'Customers & boxes',
    items: [
      { name: 'customers', label: 'Customers', icon: 'customers', roles: ['admin', 'technician'] },
      { name: 'sites', label: 'Sites', icon: 'sites', roles: ['admin', 'technician'] },
      { name: 'boxes', label: 'Boxes', icon: 'boxes', roles: ['admin', 'technician'] },
      { name: 'import', label: 'Import', icon: 'plus', roles: ['admin'] },
    ],
  },
  {
    label: 'Office',
    items: [
      { name: 'users', label: 'Users', icon: 'users', roles: ['admin'] },
      { name: 'controllers', label: 'Controllers', icon: 'controller', roles: ['admin'] },
      { name: 'mailbox', label: 'Dev mailbox', icon: 'mail', roles: ['admin'], feature: 'devMailbox' },
      { name: 'push-inbox', label: 'Push inbox', icon: 'bell', roles: ['admin'], feature: 'pushInbox' },
    ],
  },
];

/** The navigation a role sees, given the features the server offers. */
export function navFor(role: Role | null, features: Readonly<ServerFeatures>): NavGroup[] {
  if (!role) return [];
  return NAV.map((g) => ({
    label: g.label,
    items: g.items.filter((i) => (!i.roles || i.roles.includes(role)) && (!i.feature || features[i.feature])),
  })).filter((g) => g.items.length > 0);
}
