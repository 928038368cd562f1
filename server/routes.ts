/** Feature routers mounted under /api/v1 (after auth and CSRF). */
import type { Router } from 'express';
import type { AppContext } from './context';
import { customerRoutes } from './customers/routes';
import { siteRoutes } from './sites/routes';
import { boxRoutes } from './boxes/routes';
import { controllerRoutes } from './controllers/routes';
import { auditRoutes } from './audit/routes';
import { refrigerantRoutes } from './refrigerants/routes';
import { registerAlarmRoutes } from './alarms/routes';
import { registerPushRoutes } from './push/routes';
import { importRoutes } from './imports/routes';
import { trendsRoutes } from './trends/routes';
import { reportRoutes } from './reports/routes';
import { foodLogRoutes } from './foodLog/routes';
import { attachmentRoutes, visitRoutes } from './visits/routes';
import { refrigerantLogRoutes } from './refrigerantLog/routes';

/** Mounts every feature's router on the API router. */
export function registerFeatureRoutes(api: Router, ctx: AppContext): void {
  api.use('/customers', customerRoutes(ctx));
  api.use('/sites', siteRoutes(ctx));
  // CRUD only; /boxes/:id/latest, /readings and /settings come from the telemetry router on the same path.
  api.use('/boxes', boxRoutes(ctx));
  api.use('/controllers', controllerRoutes(ctx));
  api.use('/audit', auditRoutes(ctx));
  api.use('/refrigerants', refrigerantRoutes());
  api.use('/imports', importRoutes(ctx)); // CSV import of boxes with controllers (admin, technician)
  registerAlarmRoutes(api, ctx); // /alarms, /boxes/:id/maintenance, /oncall
  registerPushRoutes(api, ctx); // /push, and /dev/push-* with the fake push service
  api.use('/food-log', foodLogRoutes(ctx)); // food-safety temperature log: day view, entries, sign-off, CSV/PDF export
  api.use('/trends', trendsRoutes(ctx)); // weekly trends of a box or a site, CSV export
  api.use('/reports', reportRoutes(ctx)); // weekly report e-mails: list, send now (admin)
  api.use('/visits', visitRoutes(ctx)); // service visits with charging checks, linked alarms, attachments
  api.use('/attachments', attachmentRoutes(ctx)); // visit photos and PDFs, in scope of their visit
  api.use('/refrigerant-log', refrigerantLogRoutes(ctx)); // per-box refrigerant log with the annualized leak rate
  // telemetry routes are mounted by the lead below
}
