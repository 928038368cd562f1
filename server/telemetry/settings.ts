/**
 * Box settings sent to the controller: validated, published as config/set, tracked as pending
 * until the controller acknowledges (or the change times out), audited. The controller's ack
 * carries the values it actually applied; those of the request, within the box's limits, become
 * the box's settings, and anything else it reports is refused and audited.
 */
import { randomUUID } from 'node:crypto';
import type { Request } from 'express';
import { Op } from 'sequelize';
import { EVAPORATOR_SUPERHEAT_FLOOR_K, formatTemperatureDelta } from '../../shared/field';
import { RequestedSettings, screenAppliedSettings, type BoxSettingsBody, type SettingsChangeDto } from '../../shared/schemas/settings';
import { topics, type ConfigAckPayload, type ConfigSetPayload } from '../../shared/schemas/telemetry';
import type { AppContext } from '../context';
import type { Box, SettingsChange } from '../models';
import { problems } from '../http/problem';
import { audit } from '../audit/service';

/** A change not acknowledged within this time is marked timed-out. */
export const SETTINGS_ACK_TIMEOUT_MS = 60_000;

/** Presents a settings change. */
export function toChangeDto(c: SettingsChange): SettingsChangeDto {
  return {
    id: c.id,
    boxId: c.boxId,
    requested: JSON.parse(c.requested) as Record<string, unknown>,
    applied: c.applied ? (JSON.parse(c.applied) as Record<string, unknown>) : null,
    state: c.state,
    requestedBy: c.requestedBy,
    requestedAt: c.requestedAt.toISOString(),
    resolvedAt: c.resolvedAt?.toISOString() ?? null,
    error: c.error,
  };
}

export class SettingsService {
  private sweepTimer: NodeJS.Timeout | null = null;

  constructor(private readonly ctx: AppContext) {}

  /** Validates and sends a change; resolves the pending change record. */
  async request(req: Request, box: Box, body: BoxSettingsBody): Promise<SettingsChangeDto> {
    const { models } = this.ctx;
    const { override, ...changes } = body;
    if (changes.superheatTargetK !== undefined && changes.superheatTargetK < EVAPORATOR_SUPERHEAT_FLOOR_K && !override) {
      throw problems.unprocessable(
        'superheat-below-minimum',
        'Superheat target below the evaporator superheat floor',
        `A target below ${formatTemperatureDelta(EVAPORATOR_SUPERHEAT_FLOOR_K, 'imperial')} (${EVAPORATOR_SUPERHEAT_FLOOR_K.toFixed(2)} K) (a common-practice floor for evaporator superheat) leaves little margin before liquid leaves the evaporator. Send it again with an override reason if it is intended.`,
        { superheatTargetK: ['Below the evaporator superheat floor; an override reason is required'] },
      );
    }
    const ctl = await models.Controller.findOne({ where: { boxId: box.id } });
    if (!ctl) throw problems.unprocessable('no-controller', 'No controller', 'This box has no controller to send settings to.');
    if (ctl.disabled) throw problems.unprocessable('controller-disabled', 'Controller disabled', 'The controller of this box is disabled.');
    if (box.valveType === 'txv' && changes.superheatTargetK !== undefined) {
      throw problems.unprocessable('not-applicable', 'Not applicable to a thermostatic valve', 'This box has a thermostatic valve; its superheat is set at the valve, not by the monitoring node.', {
        superheatTargetK: ['Not adjustable on a thermostatic-valve box'],
      });
    }
    const setpoint = changes.setpointC ?? box.setpointC;
    if (setpoint <= box.lowLimitC || setpoint >= box.highLimitC) {
      throw problems.unprocessable('setpoint-outside-limits', 'Setpoint outside the alarm limits', `The setpoint must lie between the low limit (${box.lowLimitC} °C) and the high limit (${box.highLimitC} °C).`, {
        setpointC: ['Outside the alarm limits'],
      });
    }
    const id = randomUUID();
    const change = await models.SettingsChange.create({
      id,
      boxId: box.id,
      requested: JSON.stringify(changes),
      applied: null,
      state: 'pending',
      overrideReason: override?.reason ?? null,
      requestedBy: req.user?.id ?? 0,
      requestedAt: new Date(),
      resolvedAt: null,
      error: null,
    });
    await audit(models, req, { action: 'box.settings.request', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { changeId: id, changes, override: override?.reason ?? null } });
    const payload: ConfigSetPayload = { id, ...changes };
    try {
      if (!this.ctx.publish) throw new Error('no broker connection');
      await this.ctx.publish(topics.configSet(ctl.serial), JSON.stringify(payload), { qos: 1 });
    } catch (err) {
      this.ctx.logger.warn({ err: (err as Error).message, changeId: id }, 'config/set could not be published yet; it will time out if never delivered');
    }
    const dto = toChangeDto(change);
    this.ctx.bus.emit('settings', { boxId: box.id, customerId: box.customerId, change: dto });
    return dto;
  }

  /**
   * Applies a controller's acknowledgement to its pending change and to the box: only the fields
   * the change asked for, within the box's limits (screenAppliedSettings); anything else the
   * controller reports is refused, recorded on the change and audited.
   */
  async onAck(serial: string, ack: ConfigAckPayload): Promise<void> {
    const { models } = this.ctx;
    const ctl = await models.Controller.findOne({ where: { serial } });
    if (!ctl) return;
    const change = await models.SettingsChange.findOne({ where: { id: ack.id, boxId: ctl.boxId } });
    if (!change || change.state !== 'pending') return;
    const box = await models.Box.findByPk(ctl.boxId);
    if (!box) return;
    // The stored request is our own JSON, but it is parsed like any input: a row that does not
    // parse asked for nothing, so nothing is accepted from the ack.
    const requested = RequestedSettings.safeParse(JSON.parse(change.requested));
    const reported = ack.applied ?? {};
    const screen = ack.ok
      ? screenAppliedSettings(requested.success ? requested.data : {}, reported, { lowLimitC: box.lowLimitC, highLimitC: box.highLimitC, valveType: box.valveType, overridden: change.overrideReason !== null })
      : { accepted: {}, refused: {} };
    const refusedFields = Object.keys(screen.refused);
    const a = screen.accepted;
    const anyAccepted = Object.keys(a).length > 0;
    const applied = ack.ok && (anyAccepted || refusedFields.length === 0);
    const refusal = refusedFields.length > 0 ? `Refused from the controller's report: ${refusedFields.map((k) => `${k} (${screen.refused[k]})`).join('; ')}`.slice(0, 200) : null;
    if (refusedFields.length > 0) {
      this.ctx.logger.warn({ serial, changeId: ack.id, refused: refusedFields }, 'config/ack reported values outside the request or the box limits; refused');
      await audit(models, null, { action: 'box.settings.ack-refused', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { changeId: ack.id, serial, reported, refused: screen.refused } });
    }
    if (applied && anyAccepted) {
      await box.update({
        ...(a.superheatTargetK !== undefined ? { superheatTargetK: a.superheatTargetK } : {}),
        ...(a.setpointC !== undefined ? { setpointC: a.setpointC } : {}),
        ...(a.differentialK !== undefined ? { differentialK: a.differentialK } : {}),
        ...(a.refrigerant !== undefined ? { refrigerant: a.refrigerant } : {}),
        ...(a.defrost ?? {}),
      });
      this.ctx.bus.emit('boxChanged', { boxId: box.id });
    }
    // Resolved after the box is updated: whoever sees the change applied sees the box's new values.
    await change.update({ state: applied ? 'applied' : 'rejected', applied: JSON.stringify(ack.ok ? a : reported), resolvedAt: new Date(), error: ack.error ?? refusal });
    await audit(models, null, { action: applied ? 'box.settings.applied' : 'box.settings.rejected', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { changeId: ack.id, applied: ack.ok ? a : {}, error: ack.error ?? refusal, serial } });
    this.ctx.bus.emit('settings', { boxId: box.id, customerId: box.customerId, change: toChangeDto(change) });
  }

  /** Marks old pending changes as timed out. */
  async sweep(now = Date.now()): Promise<number> {
    const { models } = this.ctx;
    const stale = await models.SettingsChange.findAll({ where: { state: 'pending', requestedAt: { [Op.lt]: new Date(now - SETTINGS_ACK_TIMEOUT_MS) } } });
    for (const c of stale) {
      await c.update({ state: 'timed-out', resolvedAt: new Date(now), error: 'The controller did not acknowledge in time' });
      const box = await models.Box.findByPk(c.boxId);
      if (box) this.ctx.bus.emit('settings', { boxId: box.id, customerId: box.customerId, change: toChangeDto(c) });
    }
    return stale.length;
  }

  start(): void {
    this.sweepTimer = setInterval(() => void this.sweep().catch((err: unknown) => this.ctx.logger.warn({ err }, 'settings sweep failed')), 5000);
    this.sweepTimer.unref();
  }

  stop(): void {
    if (this.sweepTimer) clearInterval(this.sweepTimer);
  }
}
