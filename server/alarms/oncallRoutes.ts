/**
 * /api/v1/oncall: rotations (weekly shifts) with overrides, escalation policies, and who is on
 * call now. Reading is for technicians and admins; every change is admin only.
 */
import { Router } from 'express';
import { EscalationPolicyBody, OncallNowQuery, OverrideBody, RotationBody, type EscalationPolicyDto, type OncallNowDto, type RotationDto } from '../../shared/schemas/oncall';
import type { AppContext } from '../context';
import type { EscalationPolicy, OncallRotation } from '../models/alarms';
import { requireRole } from '../auth/guards';
import { parseBody, parseId, parseQuery } from '../http/validate';
import { problems } from '../http/problem';
import { audit } from '../audit/service';
import { onCallAt, policyBody, rotationShifts } from './oncall';

/** The on-call router. */
export function oncallRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;
  const readers = requireRole('admin', 'technician');
  const admin = requireRole('admin');

  async function assertStaff(userIds: number[]): Promise<void> {
    const ids = [...new Set(userIds)];
    if (ids.length === 0) return;
    const found = await models.User.count({ where: { id: ids, role: ['technician', 'admin'], disabled: false } });
    if (found !== ids.length) throw problems.unprocessable('unknown-user', 'Unknown technician', 'Every user on a rotation must be an enabled technician or admin.', { userId: ['Not an enabled technician or admin'] });
  }

  async function rotationDto(rot: OncallRotation): Promise<RotationDto> {
    const overrides = await models.OncallOverride.findAll({ where: { rotationId: rot.id }, order: [['startsAt', 'ASC']] });
    const users = overrides.length ? await models.User.findAll({ where: { id: overrides.map((o) => o.userId) }, attributes: ['id', 'name'] }) : [];
    const name = new Map(users.map((u) => [u.id, u.name]));
    return {
      id: rot.id,
      name: rot.name,
      timeZone: rot.timeZone,
      shifts: rotationShifts(rot),
      overrides: overrides.map((o) => ({ id: o.id, rotationId: o.rotationId, userId: o.userId, userName: name.get(o.userId) ?? '', startsAt: o.startsAt.toISOString(), endsAt: o.endsAt.toISOString(), note: o.note })),
      updatedAt: rot.updatedAt.toISOString(),
    };
  }

  async function loadRotation(id: number): Promise<OncallRotation> {
    const rot = await models.OncallRotation.findByPk(id);
    if (!rot) throw problems.notFound('rotation');
    return rot;
  }

  r.get('/now', readers, async (req, res) => {
    const q = parseQuery(OncallNowQuery, req);
    const atMs = q.at ? Date.parse(q.at) : Date.now();
    const entries = await onCallAt(models, atMs);
    const dto: OncallNowDto = { at: new Date(atMs).toISOString(), users: entries.map((e) => ({ id: e.user.id, name: e.user.name, email: e.user.email, rotationId: e.rotationId, viaOverride: e.viaOverride })) };
    res.json(dto);
  });

  r.get('/rotations', readers, async (_req, res) => {
    const rows = await models.OncallRotation.findAll({ order: [['id', 'ASC']] });
    res.json({ items: await Promise.all(rows.map(rotationDto)) });
  });

  r.get('/rotations/:id', readers, async (req, res) => {
    res.json(await rotationDto(await loadRotation(parseId(req))));
  });

  r.post('/rotations', admin, async (req, res) => {
    const body = parseBody(RotationBody, req);
    await assertStaff(body.shifts.map((s) => s.userId));
    const rot = await models.OncallRotation.create({ name: body.name, timeZone: body.timeZone, shifts: JSON.stringify(body.shifts) });
    await audit(models, req, { action: 'oncall.rotation.create', entityType: 'rotation', entityId: rot.id, detail: body });
    res.status(201).json(await rotationDto(rot));
  });

  r.put('/rotations/:id', admin, async (req, res) => {
    const id = parseId(req);
    const body = parseBody(RotationBody, req);
    const rot = await loadRotation(id);
    await assertStaff(body.shifts.map((s) => s.userId));
    await rot.update({ name: body.name, timeZone: body.timeZone, shifts: JSON.stringify(body.shifts) });
    await audit(models, req, { action: 'oncall.rotation.update', entityType: 'rotation', entityId: rot.id, detail: body });
    res.json(await rotationDto(rot));
  });

  r.delete('/rotations/:id', admin, async (req, res) => {
    const rot = await loadRotation(parseId(req));
    await rot.destroy();
    await audit(models, req, { action: 'oncall.rotation.delete', entityType: 'rotation', entityId: rot.id, detail: { name: rot.name } });
    res.status(204).end();
  });

  r.post('/rotations/:id/overrides', admin, async (req, res) => {
    const id = parseId(req);
    const body = parseBody(OverrideBody, req);
    const rot = await loadRotation(id);
    await assertStaff([body.userId]);
    const o = await models.OncallOverride.create({ rotationId: rot.id, userId: body.userId, startsAt: new Date(body.startsAt), endsAt: new Date(body.endsAt), note: body.note ?? null });
    await audit(models, req, { action: 'oncall.override.create', entityType: 'rotation', entityId: rot.id, detail: { overrideId: o.id, ...body } });
    res.status(201).json(await rotationDto(rot));
  });

  r.delete('/rotations/:id/overrides/:overrideId', admin, async (req, res) => {
    const rot = await loadRotation(parseId(req));
    const overrideId = parseId(req, 'overrideId');
    const n = await models.OncallOverride.destroy({ where: { id: overrideId, rotationId: rot.id } });
    if (n === 0) throw problems.notFound('override');
    await audit(models, req, { action: 'oncall.override.delete', entityType: 'rotation', entityId: rot.id, detail: { overrideId } });
    res.status(204).end();
  });

  const policyDto = (p: EscalationPolicy): EscalationPolicyDto => ({ id: p.id, ...policyBody(p), updatedAt: p.updatedAt.toISOString() });
  const policyRow = (b: EscalationPolicyBody) => ({
    name: b.name,
    priorities: b.priorities ? b.priorities.join(',') : null,
    escalateAfterMin: b.escalateAfterMin,
    levels: JSON.stringify(b.levels),
    repeatHighest: b.repeatHighest,
    quietHours: b.quietHours ? JSON.stringify(b.quietHours) : null,
  });
  async function loadPolicy(id: number): Promise<EscalationPolicy> {
    const p = await models.EscalationPolicy.findByPk(id);
    if (!p) throw problems.notFound('escalation policy');
    return p;
  }

  r.get('/policies', readers, async (_req, res) => {
    res.json({ items: (await models.EscalationPolicy.findAll({ order: [['id', 'ASC']] })).map(policyDto) });
  });

  r.post('/policies', admin, async (req, res) => {
    const body = parseBody(EscalationPolicyBody, req);
    const p = await models.EscalationPolicy.create(policyRow(body));
    await audit(models, req, { action: 'oncall.policy.create', entityType: 'escalation-policy', entityId: p.id, detail: body });
    res.status(201).json(policyDto(p));
  });

  r.put('/policies/:id', admin, async (req, res) => {
    const id = parseId(req);
    const body = parseBody(EscalationPolicyBody, req);
    const p = await loadPolicy(id);
    await p.update(policyRow(body));
    await audit(models, req, { action: 'oncall.policy.update', entityType: 'escalation-policy', entityId: p.id, detail: body });
    res.json(policyDto(p));
  });

  r.delete('/policies/:id', admin, async (req, res) => {
    const p = await loadPolicy(parseId(req));
    await p.destroy();
    await audit(models, req, { action: 'oncall.policy.delete', entityType: 'escalation-policy', entityId: p.id, detail: { name: p.name } });
    res.status(204).end();
  });

  return r;
}

