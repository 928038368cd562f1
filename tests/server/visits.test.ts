import { existsSync, mkdtempSync, readdirSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Jimp } from 'jimp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { fToC, psiToKPa } from '../../shared/field';
import { factories, signIn, startTestServer } from './helpers/app';
import { call, expectProblem, expectStatus, signInRoles, type Session, type Sessions } from './helpers/roles';
import type { VisitCloseResult, VisitDto, AttachmentDto } from '../../shared/schemas/visits';

let srv: RunningServer;
let as: Sessions;
let uploads: string;
let base: string;
let otherManager: Session;
const ids = { customer: 0, site: 0, box: 0, otherBox: 0 };

// A small upload limit (0.05 MiB = 52,428 bytes) so that "over the limit" needs only a small body.
const MAX_BYTES = Math.round(0.05 * 1024 * 1024);

beforeAll(async () => {
  // The storage folder sits alone in a folder of its own, so a file written beside it would show.
  base = mkdtempSync(path.join(os.tmpdir(), 'rimehold-uploads-'));
  uploads = path.join(base, 'uploads');
  srv = await startTestServer({ UPLOADS_DIR: uploads, UPLOAD_MAX_MIB: '0.05' });
  const f = factories(srv);
  const customer = await f.customer();
  const site = await f.site(customer.id, { elevationM: 0 });
  const box = await f.box(site.id, customer.id, { refrigerant: 'R-134a' });
  const otherBox = await f.box(site.id, customer.id);
  Object.assign(ids, { customer: customer.id, site: site.id, box: box.id, otherBox: otherBox.id });
  as = await signInRoles(srv, customer.id);
  const foreign = await f.customer();
  const m = await f.user('manager', foreign.id);
  const s = await signIn(srv, m.email, m.password);
  otherManager = { ...s, userId: m.user.id };
});
afterAll(async () => srv.stop());

const visitBody = (over: Record<string, unknown> = {}) => ({ boxId: ids.box, visitedOn: '2026-12-01', findings: 'Evaporator iced on the left side.', workDone: 'Cleared the drain line, checked charge.', parts: [{ name: 'Drain heater', qty: 1 }], timeOnSiteMin: 75, ...over });

async function newVisit(over: Record<string, unknown> = {}): Promise<VisitDto> {
  const res = await call(as.technician, 'post', '/api/v1/visits', visitBody(over));
  expectStatus(res, 201);
  return res.body as VisitDto;
}

async function openAlarm(boxId: number) {
  return srv.ctx.models.Alarm.create({ boxId, siteId: ids.site, customerId: ids.customer, ruleId: 'box-air-high', priority: 'high', state: 'unacknowledged', conditionActive: true, value: 8, message: 'Box air above the high limit', raisedAt: new Date(), clearedAt: null, acknowledgedAt: null, acknowledgedBy: null, shelvedUntil: null, nextEscalationAt: null });
}

async function png(widthPx = 800, heightPx = 600): Promise<Buffer> {
  return new Jimp({ width: widthPx, height: heightPx, color: 0x3366ccff }).getBuffer('image/png');
}

const stored = () => (existsSync(uploads) ? readdirSync(uploads) : []);
const upload = (s: Session, visitId: number) => call(s, 'post', `/api/v1/visits/${visitId}/attachments`);

describe('POST /api/v1/visits', () => {
  it('records a visit on a box with parts, time on site and an audit entry', async () => {
    const v = await newVisit();
    expect(v).toMatchObject({ boxId: ids.box, siteId: ids.site, status: 'open', timeOnSiteMin: 75, technicianId: as.technician.userId, parts: [{ name: 'Drain heater', qty: 1 }] });
    const row = await srv.ctx.models.ServiceVisit.findByPk(v.id);
    expect(row?.customerId).toBe(ids.customer);
    expect(await srv.ctx.models.AuditEntry.count({ where: { action: 'visit.create', entityId: String(v.id) } })).toBe(1);
  });

  it('computes superheat and subcooling with the shared engine from the entered pressures and the box refrigerant', async () => {
    // NIST-REFPROP P-T chart (calcspec.com), as in tests/shared/field.test.ts: R-134a 18.4 psig = 20 °F;
    // a 30 °F suction line gives 10 °F = 5.56 K of superheat (±0.3 °F).
    // R-134a 124.1 psig = 100 °F (common P-T chart value, from memory): a 90 °F liquid line gives 10 °F = 5.56 K subcooling (±0.5 °F).
    const v = await newVisit({ checks: { suctionKPaG: psiToKPa(18.4), suctionLineC: fToC(30), liquidKPaG: psiToKPa(124.1), liquidLineC: fToC(90), sightGlassClear: true, receiverLevelPercent: 60 } });
    expect(v.checks?.refrigerant).toBe('R-134a');
    expect(v.checks?.superheatK).toBeCloseTo(10 / 1.8, 0);
    expect(Math.abs((v.checks?.superheatK ?? 0) * 1.8 - 10)).toBeLessThan(0.3);
    expect(Math.abs((v.checks?.subcoolingK ?? 0) * 1.8 - 10)).toBeLessThan(0.5);
    expect(v.checks?.highSideState).toBe('subcritical');
    expect(v.checks?.sightGlassClear).toBe(true);
    expect(v.checks?.receiverLevelWarning).toBeNull();
    const row = await srv.ctx.models.ServiceVisit.findByPk(v.id);
    expect(row?.suctionKPaG).toBeCloseTo(psiToKPa(18.4), 6); // the inputs are stored with the results
    expect(row?.superheatK).toBeCloseTo(v.checks?.superheatK ?? NaN, 9);
  });

  it('warns when the liquid receiver is above the common-practice 80 % maximum, and not at 80 %', async () => {
    const over = await newVisit({ checks: { receiverLevelPercent: 85 } });
    expect(over.checks?.receiverLevelWarning).toMatch(/80 % common-practice maximum/);
    const at = await newVisit({ checks: { receiverLevelPercent: 80 } });
    expect(at.checks?.receiverLevelWarning).toBeNull();
  });

  it('refuses charging checks on a whole-site visit with a clear problem', async () => {
    const res = await call(as.technician, 'post', '/api/v1/visits', { siteId: ids.site, visitedOn: '2026-12-01', timeOnSiteMin: 30, checks: { receiverLevelPercent: 50 } });
    expectProblem(res, 422, 'checks-need-box');
  });

  it('refuses a body with both a box and a site, or a receiver level over 100 %', async () => {
    expectProblem(await call(as.technician, 'post', '/api/v1/visits', visitBody({ siteId: ids.site })), 400, 'validation');
    expectProblem(await call(as.technician, 'post', '/api/v1/visits', visitBody({ checks: { receiverLevelPercent: 120 } })), 400, 'validation');
  });

  it('refuses to link an alarm of another box', async () => {
    const a = await openAlarm(ids.otherBox);
    expectProblem(await call(as.technician, 'post', '/api/v1/visits', visitBody({ alarmIds: [a.id] })), 422, 'alarm-not-on-visit');
  });

  it('lets a manager read their own visits but not write them, and hides them from another customer', async () => {
    const v = await newVisit();
    expectStatus(await call(as.manager, 'get', `/api/v1/visits/${v.id}`), 200);
    expectProblem(await call(as.manager, 'post', '/api/v1/visits', visitBody()), 403, 'forbidden');
    expectProblem(await call(as.anonymous, 'post', '/api/v1/visits', visitBody()), 401);
    expectProblem(await call(otherManager, 'get', `/api/v1/visits/${v.id}`), 404, 'not-found');
    const list = await call(otherManager, 'get', '/api/v1/visits');
    expect(list.body.items.some((i: VisitDto) => i.id === v.id)).toBe(false);
  });
});

describe('POST /api/v1/visits/:id/close', () => {
  it('acknowledges the linked open alarms with the visit as the note, and then refuses changes', async () => {
    const a = await openAlarm(ids.box);
    const v = await newVisit({ alarmIds: [a.id] });
    const res = await call(as.technician, 'post', `/api/v1/visits/${v.id}/close`, {});
    expectStatus(res, 200);
    const body = res.body as VisitCloseResult;
    expect(body.alarms).toEqual([{ alarmId: a.id, outcome: 'acknowledged' }]);
    expect(body.visit.status).toBe('closed');
    await a.reload();
    expect(a.state).toBe('acknowledged');
    expect(a.acknowledgedBy).toBe(as.technician.userId);
    const t = await srv.ctx.models.AlarmTransition.findOne({ where: { alarmId: a.id, action: 'ack' } });
    expect(t?.note).toContain(`Service visit #${v.id}`);
    expectProblem(await call(as.technician, 'post', `/api/v1/visits/${v.id}/close`, {}), 409, 'conflict');
    expectProblem(await call(as.technician, 'patch', `/api/v1/visits/${v.id}`, { findings: 'changed' }), 409, 'conflict');
  });

  it('leaves the alarms as they are when asked not to acknowledge them', async () => {
    const a = await openAlarm(ids.box);
    const v = await newVisit({ alarmIds: [a.id] });
    const res = await call(as.technician, 'post', `/api/v1/visits/${v.id}/close`, { acknowledgeAlarms: false });
    expect((res.body as VisitCloseResult).alarms[0]?.outcome).toBe('not-waiting');
    await a.reload();
    expect(a.state).toBe('unacknowledged');
  });
});

describe('POST /api/v1/visits/:id/attachments', () => {
  it('stores a photo under a random name with a 320-px thumbnail and serves it to the visit’s users only', async () => {
    const v = await newVisit();
    const res = await upload(as.technician, v.id).attach('files', await png(), { filename: 'evaporator.png', contentType: 'image/png' });
    expectStatus(res, 201);
    const [a] = res.body as AttachmentDto[];
    expect(a).toMatchObject({ contentType: 'image/png', fileName: 'evaporator.png', hasThumb: true });
    const row = await srv.ctx.models.VisitAttachment.findByPk(a!.id);
    expect(stored()).toEqual(expect.arrayContaining([row!.storageName, `${row!.storageName}.thumb.jpg`]));
    const file = await call(as.manager, 'get', a!.url).buffer(true);
    expectStatus(file, 200);
    expect(file.headers['content-type']).toBe('image/png');
    expect(file.headers['x-content-type-options']).toBe('nosniff');
    expect(file.headers['content-disposition']).toBe('inline; filename="evaporator.png"');
    const thumb = await call(as.manager, 'get', a!.thumbUrl ?? '').buffer(true);
    expectStatus(thumb, 200);
    expect(thumb.headers['content-type']).toBe('image/jpeg');
    const img = await Jimp.read(thumb.body as Buffer);
    expect(img.width).toBe(320);
    expect(img.height).toBe(240); // 800 × 600 scaled to 320 wide keeps 4:3
  });

  it('answers 404 to a manager of another customer for the photo and its thumbnail', async () => {
    const v = await newVisit();
    const res = await upload(as.technician, v.id).attach('files', await png(), { filename: 'coil.png', contentType: 'image/png' });
    const [a] = res.body as AttachmentDto[];
    expectProblem(await call(otherManager, 'get', a!.url), 404, 'not-found');
    expectProblem(await call(otherManager, 'get', a!.thumbUrl ?? ''), 404, 'not-found');
    expectProblem(await call(as.anonymous, 'get', a!.url), 401);
  });

  it('refuses text bytes named photo.jpg and declared image/jpeg, storing nothing', async () => {
    const v = await newVisit();
    const before = stored().length;
    const res = await upload(as.technician, v.id).attach('files', Buffer.from('just some text, not a picture\n'.repeat(20)), { filename: 'photo.jpg', contentType: 'image/jpeg' });
    expectProblem(res, 415, 'unsupported-media');
    expect(res.body.detail).toMatch(/not a recognised photo or PDF/);
    expect(stored().length).toBe(before);
    expect(await srv.ctx.models.VisitAttachment.count({ where: { visitId: v.id } })).toBe(0);
  });

  it('refuses the whole upload when one of its files is of a wrong type', async () => {
    const v = await newVisit();
    const before = stored().length;
    const res = await upload(as.technician, v.id)
      .attach('files', await png(), { filename: 'good.png', contentType: 'image/png' })
      .attach('files', Buffer.from('<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>'), { filename: 'bad.png', contentType: 'image/png' });
    expectProblem(res, 415, 'unsupported-media');
    expect(stored().length).toBe(before);
    expect(await srv.ctx.models.VisitAttachment.count({ where: { visitId: v.id } })).toBe(0);
  });

  it('keeps a PNG declared as application/pdf as the PNG its content says it is', async () => {
    const v = await newVisit();
    const res = await upload(as.technician, v.id).attach('files', await png(), { filename: 'report.pdf', contentType: 'application/pdf' });
    expectStatus(res, 201);
    expect((res.body as AttachmentDto[])[0]).toMatchObject({ contentType: 'image/png', fileName: 'report.png' });
  });

  it('accepts a PDF by its content and serves it as a download', async () => {
    const v = await newVisit();
    const pdf = Buffer.from('%PDF-1.4\n1 0 obj<< /Type /Catalog >>endobj\ntrailer<< /Root 1 0 R >>\n%%EOF\n');
    const res = await upload(as.technician, v.id).attach('files', pdf, { filename: 'invoice.pdf', contentType: 'application/octet-stream' });
    expectStatus(res, 201);
    const [a] = res.body as AttachmentDto[];
    expect(a).toMatchObject({ contentType: 'application/pdf', hasThumb: false, thumbUrl: null });
    const file = await call(as.technician, 'get', a!.url).buffer(true);
    expect(file.headers['content-disposition']).toBe('attachment; filename="invoice.pdf"');
  });

  it('answers 413 over the size limit and stores nothing', async () => {
    const v = await newVisit();
    const before = stored().length;
    const big = Buffer.concat([await png(), Buffer.alloc(MAX_BYTES + 1)]);
    const res = await upload(as.technician, v.id).attach('files', big, { filename: 'big.png', contentType: 'image/png' });
    expectProblem(res, 413, 'too-large');
    expect(stored().length).toBe(before);
    expect(await srv.ctx.models.VisitAttachment.count({ where: { visitId: v.id } })).toBe(0);
  });

  it('keeps a path-like file name from escaping the storage folder and sanitises the download name', async () => {
    const v = await newVisit();
    const jpeg = await new Jimp({ width: 64, height: 48, color: 0xff0000ff }).getBuffer('image/jpeg');
    const res = await upload(as.technician, v.id).attach('files', jpeg, { filename: '../../etc/passwd.jpg', contentType: 'image/jpeg' });
    expectStatus(res, 201);
    const [a] = res.body as AttachmentDto[];
    const row = await srv.ctx.models.VisitAttachment.findByPk(a!.id);
    expect(row!.storageName).toMatch(/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/);
    expect(stored()).toContain(row!.storageName);
    expect(stored().every((n) => /^[0-9a-f-]{36}(\.thumb\.jpg)?$/.test(n))).toBe(true);
    expect(readdirSync(base)).toEqual(['uploads']); // nothing written beside the folder
    const file = await call(as.technician, 'get', a!.url).buffer(true);
    expect(file.headers['content-disposition']).toBe('inline; filename="passwd.jpg"');
  });

  it('refuses uploads from a manager and for a visit out of scope', async () => {
    const v = await newVisit();
    expectProblem(await upload(as.manager, v.id).attach('files', await png(), { filename: 'a.png', contentType: 'image/png' }), 403, 'forbidden');
    expectProblem(await upload(as.technician, 999_999).attach('files', await png(), { filename: 'a.png', contentType: 'image/png' }), 404, 'not-found');
  });
});
