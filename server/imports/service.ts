/**
 * Importing boxes with their controllers from CSV rows: a plan says row by row what would be
 * created or why not; the import stores every row or none (one transaction), issuing each new
 * controller's device secret once and keeping only its hash.
 */
import { Op, UniqueConstraintError, type Transaction } from 'sequelize';
import type { ZodError } from 'zod';
import { BOX_KINDS, VALVE_TYPES, type BoxKind } from '../../shared/domain';
import { REFRIGERANT_IDS } from '../../shared/refrigerants';
import { fToC, parseUserNumber } from '../../shared/field/units';
import { BoxCreateBody, ControllerCreateBody } from '../../shared/schemas/boxes';
import type { ProblemDetails } from '../../shared/schemas/common';
import type { SessionUser } from '../../shared/schemas/auth';
import { type ImportReport, type ImportResult, type ImportRowReport, type ImportedSecret } from '../../shared/schemas/imports';
import { BOX_DEFAULTS } from '../../shared/boxFields';
import type { AppContext } from '../context';
import type { Models } from '../models';
import { scopeWhere } from '../auth/guards';
import { customerScope } from '../customers/service';
import { HttpProblem, problems } from '../http/problem';
import { auditBy, type AuditActor, type AuditInput } from '../audit/service';
import { hashDeviceSecret, newDeviceSecret } from '../controllers/secrets';
import type { CsvDataRow } from './csv';

/** A row that passed every check, ready to store. */
interface PlannedRow {
  line: number;
  customerId: number;
  box: BoxCreateBody;
  controller: ControllerCreateBody | null;
}

/** The report plus the rows to store (only meaningful when the report is ok). */
export interface ImportPlan {
  report: ImportReport;
  planned: PlannedRow[];
}

/** A refused import: 422 whose body carries the row-by-row report beside the usual problem fields. */
export class ImportRejected extends HttpProblem {
  constructor(readonly report: ImportReport) {
    const bad = report.rows.filter((r) => r.status === 'rejected');
    const errors = Object.fromEntries(bad.map((r) => [`line ${r.line}`, r.reasons]));
    const detail =
      report.rows.length === 0
        ? 'The file has no data rows; nothing was imported.'
        : `${bad.length} of ${report.rows.length} rows are rejected; nothing was imported. Fix them and upload the file again.`;
    super(422, 'import-rows', 'Some rows cannot be imported', detail, errors);
  }

  /** The problem body with the report as an extension member (RFC 9457 §3.2). */
  override toProblem(instance?: string, requestId?: string): ProblemDetails & { report: ImportReport } {
    return { ...super.toProblem(instance, requestId), report: this.report };
  }
}

/** Box fields a row gives, by the column that gives them (for reasons that name the column). */
const COLUMN_OF: Record<string, string> = {
  siteId: 'site',
  name: 'box_name',
  kind: 'kind',
  setpointC: 'setpoint',
  highLimitC: 'high_limit',
  lowLimitC: 'low_limit',
  refrigerant: 'refrigerant',
  valveType: 'valve_type',
  serial: 'controller_serial',
  valveFullSteps: 'valve_full_steps',
  firmware: 'firmware',
};

const lower = (s: string) => s.trim().toLowerCase();
const REFRIGERANT_BY_KEY = new Map<string, (typeof REFRIGERANT_IDS)[number]>(REFRIGERANT_IDS.map((id) => [id.replace(/-/g, '').toUpperCase(), id]));

/** The catalogue id for a refrigerant as people write it ("R-448A", "r448a"), or the text as given. */
function refrigerantId(cell: string): string {
  return REFRIGERANT_BY_KEY.get(cell.replace(/[-\s]/g, '').toUpperCase()) ?? cell;
}

function unitOf(cell: string): 'C' | 'F' | null {
  const u = cell.trim().replace(/^°/, '').toUpperCase();
  return u === 'C' ? 'C' : u === 'F' ? 'F' : null;
}

function issueReasons(err: ZodError, ignore: ReadonlySet<string>, say: Record<string, string> = {}): string[] {
  const out = err.issues
    .filter((i) => !ignore.has(String(i.path[0] ?? '')))
    .map((i) => {
      const key = String(i.path[0] ?? '');
      return `${COLUMN_OF[key] ?? key}: ${say[key] ?? i.message}`;
    });
  return [...new Set(out)];
}

interface Lookups {
  customers: Map<string, { id: number; name: string }>;
  sitesByName: Map<string, Array<{ id: number; customerId: number; name: string }>>;
  boxNames: Set<string>;
  takenSerials: Set<string>;
}

async function loadLookups(models: Models, user: SessionUser, rows: CsvDataRow[], transaction?: Transaction): Promise<Lookups> {
  const customerNames = [...new Set(rows.map((r) => r.cells.customer).filter(Boolean))];
  const siteNames = [...new Set(rows.map((r) => r.cells.site).filter(Boolean))];
  const serials = [...new Set(rows.map((r) => r.cells.controller_serial).filter(Boolean))];
  const [customers, sites, controllers] = await Promise.all([
    customerNames.length ? models.Customer.findAll({ where: { [Op.and]: [{ name: customerNames }, customerScope(user)] }, attributes: ['id', 'name'], transaction }) : [],
    siteNames.length ? models.Site.findAll({ where: { [Op.and]: [{ name: siteNames }, scopeWhere(user)] }, attributes: ['id', 'customerId', 'name'], transaction }) : [],
    // The serial column compares case-insensitively, like the broker's look-up.
    serials.length ? models.Controller.findAll({ where: { serial: serials }, attributes: ['serial'], transaction }) : [],
  ]);
  const sitesByName = new Map<string, Array<{ id: number; customerId: number; name: string }>>();
  for (const s of sites) {
    const k = lower(s.name);
    sitesByName.set(k, [...(sitesByName.get(k) ?? []), { id: s.id, customerId: s.customerId, name: s.name }]);
  }
  const siteIds = sites.map((s) => s.id);
  const boxNames = siteIds.length ? await models.Box.findAll({ where: { siteId: siteIds }, attributes: ['siteId', 'name'], transaction }) : [];
  return {
    customers: new Map(customers.map((c) => [lower(c.name), { id: c.id, name: c.name }])),
    sitesByName,
    boxNames: new Set(boxNames.map((b) => `${b.siteId}|${lower(b.name)}`)),
    takenSerials: new Set(controllers.map((c) => lower(c.serial))),
  };
}

/** Lines of the file on which each (lower-cased) key appears, for keys that appear more than once. */
function repeats(entries: Array<{ key: string | null; line: number }>): Map<string, number[]> {
  const lines = new Map<string, number[]>();
  for (const e of entries) if (e.key) lines.set(e.key, [...(lines.get(e.key) ?? []), e.line]);
  return new Map([...lines].filter(([, l]) => l.length > 1));
}

const otherLines = (all: number[] | undefined, line: number) => (all ?? []).filter((l) => l !== line).join(', ');

/** Checks every row against the schemas, the actor's scope and the database; stores nothing (temperatures °C). */
export async function planImport(models: Models, user: SessionUser, rows: CsvDataRow[], transaction?: Transaction): Promise<ImportPlan> {
  const look = await loadLookups(models, user, rows, transaction);
  const planned: PlannedRow[] = [];
  const reports: ImportRowReport[] = [];
  const firstPass: Array<{ row: CsvDataRow; reasons: string[]; siteId: number | null; customerId: number | null; box: BoxCreateBody | null; controller: ControllerCreateBody | null }> = [];

  for (const row of rows) {
    const c = row.cells;
    const reasons: string[] = row.cellCountProblem ? [row.cellCountProblem] : [];
    // Customer and site by name, within what the actor may see.
    const customer = c.customer ? look.customers.get(lower(c.customer)) : undefined;
    if (!c.customer) reasons.push('customer: enter the customer’s name');
    else if (!customer) reasons.push(`customer: unknown customer "${c.customer}"`);
    let siteId: number | null = null;
    if (!c.site) reasons.push('site: enter the site’s name');
    else if (customer) {
      const named = look.sitesByName.get(lower(c.site)) ?? [];
      const ofCustomer = named.filter((s) => s.customerId === customer.id);
      if (ofCustomer.length === 1 && ofCustomer[0]) siteId = ofCustomer[0].id;
      else if (ofCustomer.length > 1) reasons.push(`site: customer "${customer.name}" has ${ofCustomer.length} sites named "${c.site}"; rename one first`);
      else if (named.length > 0) reasons.push(`site: "${c.site}" is not a site of customer "${customer.name}"`);
      else reasons.push(`site: unknown site "${c.site}"`);
    }
    // Temperatures in the row's unit, stored in °C.
    const unit = unitOf(c.unit);
    if (!unit) reasons.push(`unit: "${c.unit}" is not C or F`);
    const kindCell = lower(c.kind);
    const kind: BoxKind = (BOX_KINDS as readonly string[]).includes(kindCell) ? (kindCell as BoxKind) : 'cooler';
    const defaults = BOX_DEFAULTS[kind];
    const temp = (column: string, cell: string, fallbackC: number | undefined): number | undefined => {
      if (cell === '') {
        if (fallbackC === undefined) reasons.push(`${column}: enter a number`);
        return fallbackC;
      }
      try {
        const v = parseUserNumber(cell);
        return unit === 'F' ? Math.round(fToC(v) * 100) / 100 : v;
      } catch {
        reasons.push(`${column}: "${cell}" is not a number`);
        return undefined;
      }
    };
    const setpointC = temp('setpoint', c.setpoint, undefined);
    const highLimitC = temp('high_limit', c.high_limit, defaults.highLimitC);
    const lowLimitC = temp('low_limit', c.low_limit, defaults.lowLimitC);
    const ignore = new Set<string>(['siteId']);
    if (setpointC === undefined) ignore.add('setpointC');
    if (highLimitC === undefined) ignore.add('highLimitC');
    if (lowLimitC === undefined) ignore.add('lowLimitC');
    const boxCandidate = {
      ...defaults,
      siteId: siteId ?? 0,
      name: c.box_name,
      kind: kindCell,
      refrigerant: refrigerantId(c.refrigerant),
      valveType: c.valve_type === '' ? defaults.valveType : lower(c.valve_type),
      setpointC,
      highLimitC,
      lowLimitC,
    };
    const box = BoxCreateBody.safeParse(boxCandidate);
    if (!box.success) {
      const why = issueReasons(box.error, ignore, {
        kind: `"${c.kind}" is not ${BOX_KINDS.join(' or ')}`,
        valveType: `"${c.valve_type}" is not ${VALVE_TYPES.join(' or ')}`,
        refrigerant: `"${c.refrigerant}" is not a refrigerant Rimehold knows (see GET /api/v1/refrigerants)`,
      });
      // Ranges are in °C; say what a °F row's value came to.
      reasons.push(...(unit === 'F' ? why.map((w) => (/^(setpoint|high_limit|low_limit):/.test(w) ? `${w} (°C; the row's values are converted from °F)` : w)) : why));
    }
    // The controller, when the row names one.
    let controller: ControllerCreateBody | null = null;
    if (c.controller_serial) {
      let steps: number | undefined;
      if (c.valve_full_steps !== '') {
        steps = Number(c.valve_full_steps);
        if (!Number.isInteger(steps)) reasons.push(`valve_full_steps: "${c.valve_full_steps}" is not a whole number`);
      }
      const ctl = ControllerCreateBody.safeParse({ boxId: 1, serial: c.controller_serial, valveFullSteps: Number.isInteger(steps) ? steps : undefined, firmware: c.firmware || null });
      if (ctl.success) controller = ctl.data;
      else reasons.push(...issueReasons(ctl.error, new Set(['boxId'])));
      if (look.takenSerials.has(lower(c.controller_serial))) reasons.push(`controller_serial: ${c.controller_serial} is already provisioned`);
    } else if (c.valve_full_steps || c.firmware) reasons.push('controller_serial: valve_full_steps and firmware need a controller serial');
    firstPass.push({ row, reasons, siteId, customerId: customer?.id ?? null, box: box.success ? box.data : null, controller });
  }

  // Repeats inside the file: serials anywhere, box names per site.
  const serialRepeats = repeats(firstPass.map((p) => ({ key: p.row.cells.controller_serial ? lower(p.row.cells.controller_serial) : null, line: p.row.line })));
  const boxRepeats = repeats(firstPass.map((p) => ({ key: p.siteId !== null && p.row.cells.box_name ? `${p.siteId}|${lower(p.row.cells.box_name)}` : null, line: p.row.line })));
  for (const p of firstPass) {
    const c = p.row.cells;
    const serialKey = lower(c.controller_serial);
    if (serialKey && serialRepeats.has(serialKey)) p.reasons.push(`controller_serial: ${c.controller_serial} is also on line ${otherLines(serialRepeats.get(serialKey), p.row.line)}`);
    const boxKey = `${p.siteId}|${lower(c.box_name)}`;
    if (p.siteId !== null && c.box_name) {
      if (look.boxNames.has(boxKey)) p.reasons.push(`box_name: site "${c.site}" already has a box named "${c.box_name}"`);
      if (boxRepeats.has(boxKey)) p.reasons.push(`box_name: "${c.box_name}" at site "${c.site}" is also on line ${otherLines(boxRepeats.get(boxKey), p.row.line)}`);
    }
    const ok = p.reasons.length === 0 && p.box !== null && p.customerId !== null;
    reports.push({
      line: p.row.line,
      status: ok ? 'ok' : 'rejected',
      reasons: p.reasons,
      creates: ok && p.box ? { customerName: c.customer, siteName: c.site, boxName: p.box.name, kind: p.box.kind, setpointC: p.box.setpointC, controllerSerial: p.controller?.serial ?? null } : null,
    });
    if (ok && p.box && p.customerId !== null) planned.push({ line: p.row.line, customerId: p.customerId, box: p.box, controller: p.controller });
  }
  const okRows = reports.filter((r) => r.status === 'ok').length;
  return {
    report: {
      dryRun: true,
      ok: reports.length > 0 && okRows === reports.length,
      rows: reports,
      counts: { rows: reports.length, ok: okRows, rejected: reports.length - okRows, boxes: planned.length, controllers: planned.filter((p) => p.controller).length },
    },
    planned,
  };
}

/** Audit rows written in one multi-row INSERT, shaped as auditBy() writes them (one per box or controller). */
function auditRows(actor: AuditActor, entries: AuditInput[]) {
  const at = new Date();
  return entries.map((e) => ({
    at,
    userId: actor.userId,
    action: e.action,
    entityType: e.entityType,
    entityId: e.entityId === undefined || e.entityId === null ? null : String(e.entityId),
    customerId: e.customerId ?? null,
    detail: e.detail === undefined ? null : JSON.stringify(e.detail),
    requestId: actor.requestId,
  }));
}

/** Inserts the planned boxes and controllers with multi-row INSERTs; returns the box id of each planned row, in order. */
async function insertPlanned(models: Models, planned: PlannedRow[], transaction: Transaction): Promise<{ boxIds: number[]; secrets: ImportedSecret[]; controllerIds: Map<string, number> }> {
  await models.Box.bulkCreate(
    planned.map((p) => ({ ...p.box, customerId: p.customerId })),
    { transaction },
  );
  // The plan made (site, name) unique among the new rows and against the stored ones, so the names find the new ids.
  const stored = await models.Box.findAll({
    where: { siteId: [...new Set(planned.map((p) => p.box.siteId))], name: [...new Set(planned.map((p) => p.box.name))] },
    attributes: ['id', 'siteId', 'name'],
    transaction,
  });
  const idByKey = new Map(stored.map((b) => [`${b.siteId}|${lower(b.name)}`, b.id]));
  const boxIds = planned.map((p) => idByKey.get(`${p.box.siteId}|${lower(p.box.name)}`) ?? 0);
  if (boxIds.some((id) => id === 0)) throw new Error('import: a new box was not found after its insert');
  const secrets: ImportedSecret[] = [];
  const controllers = planned.flatMap((p, i) => {
    if (!p.controller) return [];
    const deviceSecret = newDeviceSecret();
    const boxId = boxIds[i] ?? 0;
    secrets.push({ serial: p.controller.serial, boxId, deviceSecret });
    return [{ boxId, serial: p.controller.serial, secretHash: hashDeviceSecret(deviceSecret), valveFullSteps: p.controller.valveFullSteps, firmware: p.controller.firmware, lastSeenAt: null, secretRotatedAt: null }];
  });
  const controllerIds = new Map<string, number>();
  if (controllers.length > 0) {
    await models.Controller.bulkCreate(controllers, { transaction });
    const rows = await models.Controller.findAll({ where: { serial: controllers.map((c) => c.serial) }, attributes: ['id', 'serial'], transaction });
    for (const c of rows) controllerIds.set(lower(c.serial), c.id);
  }
  return { boxIds, secrets, controllerIds };
}

/**
 * Stores every row of the file in one transaction, or none: any rejected row → 422 with the report.
 * Each box and controller gets its own audit entry and the import a summary entry, in the same transaction.
 */
export async function runImport(ctx: AppContext, user: SessionUser, actor: AuditActor, rows: CsvDataRow[], fileName: string): Promise<ImportResult> {
  const { models } = ctx;
  try {
    return await ctx.sequelize.transaction(async (transaction) => {
      const { report, planned } = await planImport(models, user, rows, transaction);
      if (!report.ok) throw new ImportRejected({ ...report, dryRun: false });
      const { boxIds, secrets, controllerIds } = await insertPlanned(models, planned, transaction);
      const entries: AuditInput[] = planned.flatMap((p, i): AuditInput[] => {
        const boxId = boxIds[i];
        const box: AuditInput = { action: 'box.create', entityType: 'box', entityId: boxId, customerId: p.customerId, detail: { ...p.box, source: 'import', line: p.line } };
        if (!p.controller) return [box];
        const c = p.controller;
        const detail = { serial: c.serial, boxId, valveFullSteps: c.valveFullSteps, firmware: c.firmware, source: 'import' };
        return [box, { action: 'controller.create', entityType: 'controller', entityId: controllerIds.get(lower(c.serial)) ?? null, customerId: p.customerId, detail }];
      });
      await models.AuditEntry.bulkCreate(auditRows(actor, entries), { transaction });
      await auditBy(models, actor, { action: 'import.boxes', entityType: 'import', entityId: null, detail: { fileName: fileName.slice(0, 200), rows: rows.length, boxIds, serials: secrets.map((s) => s.serial) } }, transaction);
      return { ...report, dryRun: false, boxIds, secrets };
    });
  } catch (err) {
    // Another import or a provisioning took a serial between the plan and the insert.
    if (err instanceof UniqueConstraintError) throw problems.conflict('A controller serial in the file was provisioned meanwhile; run the dry run again. Nothing was imported.');
    throw err;
  }
}
