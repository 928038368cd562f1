import { readFileSync } from 'node:fs';
import path from 'node:path';
import { Op } from 'sequelize';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { PROJECT_ROOT } from '../../server/config';
import { hashDeviceSecret, verifyDeviceSecret } from '../../server/controllers/secrets';
import { IMPORT_COLUMNS, IMPORT_MAX_BYTES, IMPORT_MAX_ROWS, type ImportReport, type ImportResult } from '../../shared/schemas/imports';
import { factories } from './helpers/app';
import { call, expectProblem, expectStatus, serial, signInRoles, tenant, type Session, type Sessions, type Tenant } from './helpers/roles';
import { connectController, startTelemetryServer } from './helpers/telemetry';

let srv: RunningServer;
let as: Sessions;
let mine: Tenant;
let other: Tenant;

beforeAll(async () => {
  srv = await startTelemetryServer();
  mine = await tenant(srv);
  other = await tenant(srv);
  as = await signInRoles(srv, mine.customer.id);
});
afterAll(async () => srv.stop());

type Cells = Partial<Record<(typeof IMPORT_COLUMNS)[number], string>>;

/** A CSV file with the template's header and one line per row (cells quoted). */
function csvOf(rows: Cells[]): string {
  const quote = (v: string) => `"${v.replace(/"/g, '""')}"`;
  return [IMPORT_COLUMNS.join(','), ...rows.map((r) => IMPORT_COLUMNS.map((c) => quote(r[c] ?? '')).join(','))].join('\n') + '\n';
}

/** A good row for my tenant's site: a cooler at 36 °F with a new controller. */
function goodRow(over: Cells = {}): Cells {
  return {
    customer: mine.customer.name,
    site: mine.site.name,
    box_name: `Imported ${serial()}`,
    kind: 'cooler',
    refrigerant: 'R-448A',
    setpoint: '36',
    unit: 'F',
    high_limit: '41',
    low_limit: '30',
    valve_type: 'eev',
    controller_serial: serial(),
    ...over,
  };
}

function upload(s: Session, body: string | Buffer, opts: { dryRun?: boolean; filename?: string; contentType?: string } = {}) {
  const url = `/api/v1/imports/boxes${opts.dryRun ? '?dryRun=1' : ''}`;
  const bytes = typeof body === 'string' ? Buffer.from(body, 'utf8') : body;
  return s.agent
    .post(url)
    .set('x-csrf-token', s.csrf)
    .attach('file', bytes, { filename: opts.filename ?? 'boxes.csv', contentType: opts.contentType ?? 'text/csv' });
}

const boxesNamed = (names: string[]) => srv.ctx.models.Box.count({ where: { name: { [Op.in]: names } } });
const controllersWith = (serials: string[]) => srv.ctx.models.Controller.count({ where: { serial: { [Op.in]: serials } } });

describe('GET /api/v1/imports/boxes/template.csv', () => {
  it('serves the template with every column, the same file as docs/import-template.csv', async () => {
    const res = await call(as.admin, 'get', '/api/v1/imports/boxes/template.csv');
    expectStatus(res, 200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    expect(res.headers['content-disposition']).toMatch(/attachment/);
    expect(res.text.split(/\r?\n/)[0]).toBe(IMPORT_COLUMNS.join(','));
    expect(res.text).toBe(readFileSync(path.join(PROJECT_ROOT, 'docs', 'import-template.csv'), 'utf8'));
  });

  it('has example rows that pass the dry run once their customer and site exist', async () => {
    const template = (await call(as.admin, 'get', '/api/v1/imports/boxes/template.csv')).text;
    const [header, ...rows] = template.trim().split('\r\n');
    // The examples name demo customers; point them at this test's customer and site, with fresh serials.
    const mineRows = rows.map((r) => [mine.customer.name, mine.site.name, ...(r.split(',').slice(2, 10)), serial(), ...r.split(',').slice(11)].join(','));
    const res = await upload(as.admin, [header, ...mineRows].join('\r\n'), { dryRun: true });
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ ok: true, counts: { rows: 2, ok: 2, boxes: 2, controllers: 2 } });
  });
});

describe('POST /api/v1/imports/boxes?dryRun=1', () => {
  it('reports each row with what it would create or each reason it is rejected, and stores nothing', async () => {
    const good = goodRow();
    const dupSerial = serial();
    const rows: Cells[] = [
      good,
      goodRow({ site: 'No Such Site' }),
      goodRow({ refrigerant: 'R-9999' }),
      // 80 °F is 26.7 °C, above the 15 °C setpoint ceiling of BOX_LIMITS (our product limit).
      goodRow({ setpoint: '80', high_limit: '85' }),
      goodRow({ controller_serial: dupSerial }),
      goodRow({ controller_serial: dupSerial }),
      goodRow({ controller_serial: mine.controller.serial }),
      goodRow({ unit: 'K', kind: 'chiller' }),
    ];
    const names = rows.map((r) => r.box_name ?? '');
    const boxesBefore = await srv.ctx.models.Box.count();
    const res = await upload(as.admin, csvOf(rows), { dryRun: true });
    expectStatus(res, 200);
    const report = res.body as ImportReport;
    expect(report).toMatchObject({ dryRun: true, ok: false, counts: { rows: 8, ok: 1, rejected: 7, boxes: 1, controllers: 1 } });
    // Line 1 is the header, so the first data row is line 2.
    expect(report.rows.map((r) => [r.line, r.status])).toEqual([
      [2, 'ok'],
      [3, 'rejected'],
      [4, 'rejected'],
      [5, 'rejected'],
      [6, 'rejected'],
      [7, 'rejected'],
      [8, 'rejected'],
      [9, 'rejected'],
    ]);
    // 36 °F = 2.22 °C: (36 − 32) / 1.8, the definition of the Fahrenheit scale.
    expect(report.rows[0]).toEqual({
      line: 2,
      status: 'ok',
      reasons: [],
      creates: { customerName: mine.customer.name, siteName: mine.site.name, boxName: good.box_name, kind: 'cooler', setpointC: 2.22, controllerSerial: good.controller_serial },
    });
    const reasons = report.rows.map((r) => r.reasons.join(' | '));
    expect(reasons[1]).toMatch(/^site: unknown site "No Such Site"$/);
    expect(reasons[2]).toMatch(/refrigerant: "R-9999" is not a refrigerant/);
    expect(reasons[3]).toMatch(/setpoint: Setpoint: at most 15/);
    expect(reasons[4]).toContain(`controller_serial: ${dupSerial} is also on line 7`);
    expect(reasons[5]).toContain(`controller_serial: ${dupSerial} is also on line 6`);
    expect(reasons[6]).toContain(`controller_serial: ${mine.controller.serial} is already provisioned`);
    expect(reasons[7]).toMatch(/unit: "K" is not C or F/);
    expect(reasons[7]).toMatch(/kind: "chiller" is not cooler or freezer/);
    expect(report.rows.slice(1).every((r) => r.creates === null)).toBe(true);
    expect(await srv.ctx.models.Box.count()).toBe(boxesBefore);
    expect(await boxesNamed(names)).toBe(0);
    expect(await controllersWith([good.controller_serial ?? '', dupSerial])).toBe(0);
  });

  it('rejects a site that belongs to another customer than the row names', async () => {
    const row = goodRow({ site: other.site.name });
    const res = await upload(as.admin, csvOf([row]), { dryRun: true });
    expectStatus(res, 200);
    expect(res.body.rows[0]).toMatchObject({ status: 'rejected', reasons: [`site: "${other.site.name}" is not a site of customer "${mine.customer.name}"`] });
  });

  it('rejects a box name the site already has, and the same box twice in the file', async () => {
    const twice = `Twice ${serial()}`;
    const res = await upload(as.admin, csvOf([goodRow({ box_name: mine.box.name }), goodRow({ box_name: twice }), goodRow({ box_name: twice })]), { dryRun: true });
    expectStatus(res, 200);
    const reasons = (res.body as ImportReport).rows.map((r) => r.reasons);
    expect(reasons[0]).toEqual([`box_name: site "${mine.site.name}" already has a box named "${mine.box.name}"`]);
    expect(reasons[1]).toEqual([`box_name: "${twice}" at site "${mine.site.name}" is also on line 4`]);
    expect(reasons[2]).toEqual([`box_name: "${twice}" at site "${mine.site.name}" is also on line 3`]);
  });

  it('refuses a header that is not the template’s with 422 naming the unknown and missing columns', async () => {
    const res = await upload(as.admin, 'customer,site,boxname\nA,B,C\n', { dryRun: true });
    expectProblem(res, 422, 'import-header');
    expect(res.body.errors.unknown).toEqual(['Unknown column "boxname"']);
    expect(res.body.errors.missing).toEqual(expect.arrayContaining(['Missing column "box_name"', 'Missing column "setpoint"']));
  });
});

describe('POST /api/v1/imports/boxes', () => {
  it('imports nothing when one row is bad, answering 422 with the row report', async () => {
    const rows = [goodRow(), goodRow(), goodRow({ setpoint: 'warm' })];
    const res = await upload(as.admin, csvOf(rows));
    expectProblem(res, 422, 'import-rows');
    expect(res.body.report).toMatchObject({ dryRun: false, ok: false, counts: { rows: 3, ok: 2, rejected: 1 } });
    expect(res.body.report.rows[2]).toMatchObject({ line: 4, status: 'rejected', reasons: ['setpoint: "warm" is not a number'] });
    expect(res.body.errors).toEqual({ 'line 4': ['setpoint: "warm" is not a number'] });
    expect(res.text).not.toMatch(/deviceSecret/);
    expect(await boxesNamed(rows.map((r) => r.box_name ?? ''))).toBe(0);
    expect(await controllersWith(rows.map((r) => r.controller_serial ?? ''))).toBe(0);
    const refused = await srv.ctx.models.AuditEntry.findOne({ where: { action: 'import.boxes.refused', userId: as.admin.userId }, order: [['id', 'DESC']] });
    expect(JSON.parse(refused?.detail ?? '{}')).toMatchObject({ rows: 3, rejected: 1 });
  });

  it('creates the boxes and controllers of a good file, answers each secret once, and the controllers can sign in to the broker', async () => {
    const f = factories(srv);
    const site2 = await f.site(mine.customer.id);
    const rows = [
      goodRow(),
      // A freezer given in °C without limits takes the freezer starting values; no serial → no controller.
      { customer: mine.customer.name.toUpperCase(), site: site2.name, box_name: `Freezer ${serial()}`, kind: 'Freezer', refrigerant: 'r404a', setpoint: '-23', unit: 'C' },
      goodRow({ site: site2.name, valve_full_steps: '2500', firmware: '3.0.1' }),
    ];
    const res = await upload(as.admin, csvOf(rows));
    expectStatus(res, 201);
    expect(res.headers['cache-control']).toBe('no-store');
    const result = res.body as ImportResult;
    expect(result).toMatchObject({ dryRun: false, ok: true, counts: { rows: 3, ok: 3, rejected: 0, boxes: 3, controllers: 2 } });
    expect(result.boxIds).toHaveLength(3);
    expect(result.secrets.map((s) => s.serial)).toEqual([rows[0]?.controller_serial, rows[2]?.controller_serial]);

    const boxes = await srv.ctx.models.Box.findAll({ where: { id: result.boxIds }, order: [['id', 'ASC']], include: [{ association: 'controller' }] });
    // 36, 41, 30 °F → 2.22, 5, −1.11 °C: (F − 32) / 1.8, the definition of the Fahrenheit scale.
    expect(boxes[0]?.toJSON()).toMatchObject({ siteId: mine.site.id, customerId: mine.customer.id, kind: 'cooler', refrigerant: 'R-448A', setpointC: 2.22, highLimitC: 5, lowLimitC: -1.11 });
    // The freezer starting values of IMPORT_BOX_DEFAULTS (the box form's, common practice): −12 / −30 °C, electric defrost.
    expect(boxes[1]?.toJSON()).toMatchObject({ siteId: site2.id, kind: 'freezer', refrigerant: 'R-404A', setpointC: -23, highLimitC: -12, lowLimitC: -30, defrostType: 'electric' });
    const b1 = boxes[1] as unknown as { controller: unknown };
    expect(b1.controller).toBeNull();
    const ctl = await srv.ctx.models.Controller.findOne({ where: { serial: rows[2]?.controller_serial ?? '' } });
    expect(ctl?.toJSON()).toMatchObject({ boxId: result.boxIds[2], valveFullSteps: 2500, firmware: '3.0.1', disabled: false });

    for (const s of result.secrets) {
      const row = await srv.ctx.models.Controller.findOne({ where: { serial: s.serial } });
      expect(row?.boxId).toBe(s.boxId);
      // 32 random bytes in base64url are 43 characters (server/controllers/secrets.ts).
      expect(s.deviceSecret).toMatch(/^[A-Za-z0-9_-]{43}$/);
      expect(row?.secretHash).toBe(hashDeviceSecret(s.deviceSecret));
      expect(verifyDeviceSecret(s.deviceSecret, row?.secretHash ?? '')).toBe(true);
      const client = await connectController(srv.mqttUrl ?? '', s.serial, s.deviceSecret);
      expect(client.connected).toBe(true);
      await client.endAsync();
    }
    // Audited per box, per controller and for the import, without any secret.
    const entries = await srv.ctx.models.AuditEntry.findAll({ where: { userId: as.admin.userId, action: { [Op.in]: ['box.create', 'controller.create', 'import.boxes'] } } });
    expect(entries.filter((e) => e.action === 'box.create').map((e) => Number(e.entityId)).sort()).toEqual([...result.boxIds].sort());
    expect(entries.filter((e) => e.action === 'controller.create')).toHaveLength(2);
    expect(JSON.parse(entries.find((e) => e.action === 'import.boxes')?.detail ?? '{}')).toMatchObject({ fileName: 'boxes.csv', rows: 3, boxIds: result.boxIds });
    const stored = JSON.stringify(entries);
    for (const s of result.secrets) expect(stored).not.toContain(s.deviceSecret);
    // Nothing shows a secret again.
    const again = await call(as.admin, 'get', `/api/v1/boxes/${result.boxIds[0]}`);
    expect(again.text).not.toContain(result.secrets[0]?.deviceSecret);
  });

  it('imports nothing from a file with only the header, and answers 422 for a file csv-parse cannot read', async () => {
    const empty = await upload(as.admin, `${IMPORT_COLUMNS.join(',')}\n`);
    expectProblem(empty, 422, 'import-rows');
    expect(empty.body.detail).toContain('no data rows');
    expect(empty.body.report).toMatchObject({ ok: false, counts: { rows: 0 } });
    const unclosed = await upload(as.admin, `${IMPORT_COLUMNS.join(',')}\n"${mine.customer.name},x\n`);
    expectProblem(unclosed, 422, 'import-csv');
    expect(unclosed.body.detail).toMatch(/line 2/);
  });

  it('refuses a file that is not text (PNG bytes named .csv) with 415 and stores nothing', async () => {
    // The PNG signature (ISO/IEC 15948 §5.2) and the start of an IHDR chunk.
    const png = Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0x00, 0x00, 0x00, 0x0d, 0x49, 0x48, 0x44, 0x52, 0x00, 0x00, 0x00, 0x10]);
    const before = await srv.ctx.models.Box.count();
    expectProblem(await upload(as.admin, png, { filename: 'boxes.csv', contentType: 'text/csv' }), 415, 'unsupported-media');
    expectProblem(await upload(as.admin, png, { filename: 'boxes.png', contentType: 'image/png' }), 415, 'unsupported-media');
    expect(await srv.ctx.models.Box.count()).toBe(before);
  });

  it('refuses text that is not UTF-8 and a body that is not a multipart upload with 415', async () => {
    const latin1 = Buffer.from(csvOf([goodRow({ box_name: 'Crème cooler' })]), 'latin1');
    expectProblem(await upload(as.admin, latin1), 415, 'unsupported-media');
    expectProblem(await call(as.admin, 'post', '/api/v1/imports/boxes', { file: csvOf([goodRow()]) }), 415, 'unsupported-media');
  });

  it('answers 400 for a multipart body it cannot read and for an upload without the file field', async () => {
    const noBoundary = await as.admin.agent.post('/api/v1/imports/boxes?dryRun=1').set('x-csrf-token', as.admin.csrf).set('content-type', 'multipart/form-data').send('--x\r\n');
    expectProblem(noBoundary, 400, 'bad-request');
    const noFile = await as.admin.agent.post('/api/v1/imports/boxes?dryRun=1').set('x-csrf-token', as.admin.csrf).field('note', 'no file here');
    expectProblem(noFile, 400, 'bad-request');
    expect(noFile.body.detail).toContain('field "file"');
  });

  it('refuses a file over the size limit and one over the row limit with 413', async () => {
    const row = csvOf([goodRow()]).split('\n')[1] ?? '';
    const big = `${IMPORT_COLUMNS.join(',')}\n${`${row}\n`.repeat(Math.ceil(IMPORT_MAX_BYTES / row.length) + 1)}`;
    expect(Buffer.byteLength(big)).toBeGreaterThan(IMPORT_MAX_BYTES);
    expectProblem(await upload(as.admin, big, { dryRun: true }), 413, 'too-large');
    const many = csvOf(Array.from({ length: IMPORT_MAX_ROWS + 1 }, () => ({ customer: 'x' })));
    expect(Buffer.byteLength(many)).toBeLessThan(IMPORT_MAX_BYTES);
    const res = await upload(as.admin, many, { dryRun: true });
    expectProblem(res, 413, 'too-large');
    expect(res.body.detail).toContain(`at most ${IMPORT_MAX_ROWS}`);
  });

  it('answers a technician and a manager 403 (importing provisions controllers, an admin task) and a signed-out caller 401, storing nothing', async () => {
    const row = goodRow();
    expectProblem(await upload(as.technician, csvOf([row])), 403, 'forbidden');
    expectProblem(await upload(as.technician, csvOf([row]), { dryRun: true }), 403, 'forbidden');
    expectProblem(await upload(as.manager, csvOf([row])), 403, 'forbidden');
    expectProblem(await upload(as.manager, csvOf([row]), { dryRun: true }), 403, 'forbidden');
    expectProblem(await call(as.manager, 'get', '/api/v1/imports/boxes/template.csv'), 403, 'forbidden');
    expectProblem(await upload(as.anonymous, csvOf([row])), 401, 'unauthenticated');
    expect(await boxesNamed([row.box_name ?? ''])).toBe(0);
  });
});
