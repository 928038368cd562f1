import type { RouteRecordRaw } from 'vue-router';
import type { Role } from '@shared/domain';

declare module 'vue-router' {
  interface RouteMeta {
    /** Reachable without signing in. */
    public?: boolean;
    /** Only for signed-out visitors (sign-in page). */
    guestOnly?: boolean;
    /** Roles allowed; absent = every signed-in user. */
    roles?: readonly Role[];
    title?: string;
  }
}

export const STAFF: readonly Role[] = ['admin', 'technician'];
export const ADMIN: readonly Role[] = ['admin'];

export const routes: RouteRecordRaw[] = [
  {
    path: '/sign-in',
    name: 'sign-in',
    component: () => import('@/views/auth/SignInView.vue'),
    meta: { public: true, guestOnly: true, title: 'Sign in' },
  },
  {
    path: '/set-password',
    name: 'set-password',
    component: () => import('@/views/auth/SetPasswordView.vue'),
    meta: { public: true, title: 'Set your password' },
  },
  {
    path: '/',
    component: () => import('@/components/TheAppShell.vue'),
    children: [
      { path: '', name: 'fleet', component: () => import('@/views/fleet/FleetView.vue'), meta: { title: 'Fleet' } },
      { path: 'boxes/:id(\\d+)', name: 'box', component: () => import('@/views/boxes/BoxDetailView.vue'), meta: { title: 'Box' }, props: true },
      { path: 'alarms', name: 'alarms', component: () => import('@/views/alarms/AlarmsView.vue'), meta: { title: 'Alarms' } },
      { path: 'alarms/:id(\\d+)', name: 'alarm', component: () => import('@/views/alarms/AlarmDetailView.vue'), meta: { title: 'Alarm' }, props: true },
      { path: 'tools/pressure-temperature', name: 'tool-pt', component: () => import('@/views/tools/PressureTemperatureView.vue'), meta: { title: 'P–T calculator' } },
      { path: 'tools/superheat', name: 'tool-superheat', component: () => import('@/views/tools/SuperheatView.vue'), meta: { title: 'Superheat & subcooling' } },
      { path: 'records/visits', name: 'visits', component: () => import('@/views/records/VisitsView.vue'), meta: { title: 'Service visits' } },
      { path: 'records/visits/:id(\\d+)', name: 'visit', component: () => import('@/views/records/VisitDetailView.vue'), meta: { title: 'Service visit' }, props: true },
      { path: 'records/refrigerant/:boxId(\\d+)?', name: 'refrigerant-log', component: () => import('@/views/records/RefrigerantLogView.vue'), meta: { title: 'Refrigerant log' }, props: true },
      { path: 'records/food-log', name: 'food-log', component: () => import('@/views/records/FoodLogView.vue'), meta: { title: 'Food-safety log' } },
      { path: 'records/trends', name: 'trends', component: () => import('@/views/records/TrendsView.vue'), meta: { title: 'Trends' } },
      { path: 'customers', name: 'customers', component: () => import('@/views/customers/CustomersView.vue'), meta: { title: 'Customers', roles: STAFF } },
      { path: 'sites', name: 'sites', component: () => import('@/views/customers/SitesView.vue'), meta: { title: 'Sites', roles: STAFF } },
      { path: 'boxes', name: 'boxes', component: () => import('@/views/customers/BoxesView.vue'), meta: { title: 'Boxes', roles: STAFF } },
      { path: 'import', name: 'import', component: () => import('@/views/admin/ImportView.vue'), meta: { title: 'Import boxes', roles: ADMIN } },
      { path: 'admin/users', name: 'users', component: () => import('@/views/admin/UsersView.vue'), meta: { title: 'Users', roles: ADMIN } },
      { path: 'admin/controllers', name: 'controllers', component: () => import('@/views/admin/ControllersView.vue'), meta: { title: 'Controllers', roles: ADMIN } },
      { path: 'admin/mailbox', name: 'mailbox', component: () => import('@/views/admin/MailboxView.vue'), meta: { title: 'Dev mailbox', roles: ADMIN } },
      { path: 'admin/push-inbox', name: 'push-inbox', component: () => import('@/views/admin/PushInboxView.vue'), meta: { title: 'Push inbox', roles: ADMIN } },
      { path: 'forbidden', name: 'forbidden', component: () => import('@/views/NotFoundView.vue'), meta: { title: 'Not available' }, props: { forbidden: true } },
      { path: ':pathMatch(.*)*', name: 'not-found', component: () => import('@/views/NotFoundView.vue'), meta: { title: 'Not found' } },
    ],
  },
];
