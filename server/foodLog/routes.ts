/**
 * /api/v1/food-log: a box's food-safety temperature log over up to 31 site-local days (JSON, CSV,
 * PDF), its entries (corrective actions, notes, corrections), the manager's sign-off, and each
 * site's reading plan. Managers see their own customer's boxes only (another tenant's box is 404).
 */
import { Router, type Request } from 'express';
import { FoodLogEntryBody, FoodLogEntryPatch, FoodLogQuery, FoodLogSignOffBody, FoodLogSiteSettingsBody } from '../../shared/schemas/foodLog';
import type { AppContext } from '../context';
import type { AuditActor } from '../audit/service';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { parseBody, parseId, parseQuery } from '../http/validate';
import { loadScopedSite } from '../sites/service';
import { entryDto, foodLogOf, loadFoodLogBox, siteIntervalH } from './service';
import { addEntry, deleteEntry, setSiteInterval, signOff, updateEntry } from './entries';
import { foodLogCsv } from './csv';
import { foodLogPdf } from './pdf';

const actorOf = (req: Request): AuditActor => ({ userId: req.user?.id ?? null, requestId: typeof req.id === 'string' ? req.id : null });
const fileName = (boxId: number, from: string, to: string, ext: string) => `food-log-box-${boxId}-${from}-to-${to}.${ext}`;

/** The food-log router, mounted at /food-log. */
export function foodLogRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;
  const writers = requireRole('admin', 'technician', 'manager');

  const logFor = async (req: Request) => {
    const user = currentUser(req);
    const boxId = parseId(req, 'boxId');
    const q = parseQuery(FoodLogQuery, req);
    const fb = await loadFoodLogBox(models, user, boxId);
    return foodLogOf(ctx, fb, q);
  };

  r.get('/boxes/:boxId', requireAuth, async (req, res) => {
    res.json(await logFor(req));
  });

  r.get('/boxes/:boxId/export.csv', requireAuth, async (req, res) => {
    const log = await logFor(req);
    res.type('text/csv; charset=utf-8').attachment(fileName(log.box.id, log.from, log.to, 'csv')).send(foodLogCsv(log));
  });

  r.get('/boxes/:boxId/export.pdf', requireAuth, async (req, res) => {
    const log = await logFor(req);
    const pdf = await foodLogPdf(log);
    res.type('application/pdf').attachment(fileName(log.box.id, log.from, log.to, 'pdf')).send(pdf);
  });

  r.post('/boxes/:boxId/entries', writers, async (req, res) => {
    const user = currentUser(req);
    const boxId = parseId(req, 'boxId');
    const body = parseBody(FoodLogEntryBody, req);
    const fb = await loadFoodLogBox(models, user, boxId);
    const e = await addEntry(ctx, user, actorOf(req), fb, body);
    res.status(201).json(entryDto(e, [], null));
  });

  r.post('/boxes/:boxId/sign-off', requireRole('admin', 'manager'), async (req, res) => {
    const user = currentUser(req);
    const boxId = parseId(req, 'boxId');
    const body = parseBody(FoodLogSignOffBody, req);
    const fb = await loadFoodLogBox(models, user, boxId);
    const created = await signOff(ctx, user, actorOf(req), fb, body);
    res.status(201).json({ signed: created.map((e) => entryDto(e, [], null)) });
  });

  r.patch('/entries/:id', writers, async (req, res) => {
    const user = currentUser(req);
    const id = parseId(req);
    const body = parseBody(FoodLogEntryPatch, req);
    const e = await updateEntry(ctx, user, actorOf(req), id, body);
    res.json(entryDto(e, [], null));
  });

  r.delete('/entries/:id', writers, async (req, res) => {
    const user = currentUser(req);
    await deleteEntry(ctx, user, actorOf(req), parseId(req));
    res.status(204).end();
  });

  r.get('/sites/:siteId/settings', requireAuth, async (req, res) => {
    const site = await loadScopedSite(models, currentUser(req), parseId(req, 'siteId'));
    res.json({ siteId: site.id, foodLogIntervalH: await siteIntervalH(models, site.id) });
  });

  r.put('/sites/:siteId/settings', requireRole('admin'), async (req, res) => {
    const user = currentUser(req);
    const siteId = parseId(req, 'siteId');
    const body = parseBody(FoodLogSiteSettingsBody, req);
    const site = await loadScopedSite(models, user, siteId);
    await setSiteInterval(ctx, actorOf(req), site, body);
    res.json({ siteId: site.id, foodLogIntervalH: await siteIntervalH(models, site.id) });
  });

  return r;
}
