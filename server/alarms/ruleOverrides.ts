/**
 * Per-box overrides of alarm rules: read for the engine (server/alarms/service.ts), listed with
 * their defaults and sources, set and removed by staff. A change is audited and reaches the running
 * engine through the bus (`boxChanged`, which reloads the box's rule settings).
 */
import { ALARM_RULES, type AlarmRuleId, type RuleBoxSettings, type RuleOverride } from '../../shared/alarms/types';
import { RULE_DEFAULT_SOURCES, effectiveRule } from '../../shared/rules/defaults';
import { RULE_THRESHOLDS, type BoxAlarmRuleDto, type BoxAlarmRulesDto, type RuleOverrideBody } from '../../shared/schemas/alarms';
import type { AppContext } from '../context';
import type { Box, Models } from '../models';
import type { BoxRuleOverride } from '../models/ruleOverrides';
import { auditBy, type AuditActor } from '../audit/service';
import { problems } from '../http/problem';
import { ruleSettingsOf } from './service';

/** The override fields of a stored row (null columns left out). */
function overrideOf(row: BoxRuleOverride): RuleOverride {
  const o: RuleOverride = {};
  if (row.enabled !== null) o.enabled = Boolean(row.enabled);
  if (row.threshold !== null) o.threshold = row.threshold;
  if (row.delayMin !== null) o.delayMin = row.delayMin;
  if (row.clearDelayMin !== null) o.clearDelayMin = row.clearDelayMin;
  if (row.deadband !== null) o.deadband = row.deadband;
  if (row.priority !== null) o.priority = row.priority;
  return o;
}

/** A box's stored overrides by rule (thresholds in each rule's unit, times in minutes). */
export async function loadRuleOverrides(models: Models, boxId: number): Promise<Partial<Record<AlarmRuleId, RuleOverride>>> {
  const out: Partial<Record<AlarmRuleId, RuleOverride>> = {};
  for (const row of await models.BoxRuleOverride.findAll({ where: { boxId } })) out[row.ruleId] = overrideOf(row);
  return out;
}

/** The rule settings of a box with its stored overrides (°C, K, minutes). */
export async function ruleSettingsWithOverrides(models: Models, box: Box): Promise<RuleBoxSettings> {
  return { ...ruleSettingsOf(box), overrides: await loadRuleOverrides(models, box.id) };
}

/** Every rule of a box: default (kind and box settings) with its source, the box's override and the effective value. */
export async function boxAlarmRules(models: Models, box: Box): Promise<BoxAlarmRulesDto> {
  const rows = await models.BoxRuleOverride.findAll({ where: { boxId: box.id } });
  const byRule = new Map(rows.map((r) => [r.ruleId, r]));
  const userIds = [...new Set(rows.map((r) => r.updatedBy).filter((id): id is number => id !== null))];
  const users = userIds.length ? await models.User.findAll({ where: { id: userIds }, attributes: ['id', 'name'] }) : [];
  const names = new Map(users.map((u) => [u.id, u.name]));
  const base = ruleSettingsOf(box);
  const withOverrides: RuleBoxSettings = { ...base, overrides: Object.fromEntries(rows.map((r) => [r.ruleId, overrideOf(r)])) };
  const rules: BoxAlarmRuleDto[] = ALARM_RULES.map((ruleId) => {
    const row = byRule.get(ruleId);
    return {
      ruleId,
      threshold: RULE_THRESHOLDS[ruleId],
      default: effectiveRule(base, ruleId),
      defaultSource: RULE_DEFAULT_SOURCES[ruleId],
      override: row ? overrideOf(row) : null,
      overrideUpdatedAt: row ? row.updatedAt.toISOString() : null,
      overrideUpdatedBy: row?.updatedBy ? { id: row.updatedBy, name: names.get(row.updatedBy) ?? '' } : null,
      effective: effectiveRule(withOverrides, ruleId),
    };
  });
  return { boxId: box.id, rules };
}

/**
 * Refuses an override that crosses the box's other box-air limit (a high limit at or below the
 * effective low limit, or the reverse): 422 with the two values in °C.
 */
function checkLimitsCross(settings: RuleBoxSettings, ruleId: AlarmRuleId, body: RuleOverrideBody): void {
  if (body.threshold === undefined || (ruleId !== 'box-air-high' && ruleId !== 'box-air-low')) return;
  const next: RuleBoxSettings = { ...settings, overrides: { ...settings.overrides, [ruleId]: body } };
  const highC = effectiveRule(next, 'box-air-high').threshold;
  const lowC = effectiveRule(next, 'box-air-low').threshold;
  if (highC > lowC) return;
  throw problems.unprocessable(
    'rule-limits-crossed',
    'High limit not above low limit',
    `The box-air high limit (${highC} °C) must be above the low limit (${lowC} °C); change the other limit first.`,
    { threshold: [`${ruleId === 'box-air-high' ? 'High limit must be above the low limit' : 'Low limit must be below the high limit'} (${ruleId === 'box-air-high' ? lowC : highC} °C)`] },
  );
}

/** Stores (replaces) a box's override of one rule, audits it and tells the running engine. */
export async function setRuleOverride(ctx: AppContext, actor: AuditActor, box: Box, ruleId: AlarmRuleId, body: RuleOverrideBody): Promise<void> {
  const { models } = ctx;
  checkLimitsCross(await ruleSettingsWithOverrides(models, box), ruleId, body);
  const before = await models.BoxRuleOverride.findOne({ where: { boxId: box.id, ruleId } });
  await ctx.sequelize.transaction(async (transaction) => {
    await models.BoxRuleOverride.upsert(
      {
        boxId: box.id,
        ruleId,
        enabled: body.enabled ?? null,
        threshold: body.threshold ?? null,
        delayMin: body.delayMin ?? null,
        clearDelayMin: body.clearDelayMin ?? null,
        deadband: body.deadband ?? null,
        priority: body.priority ?? null,
        updatedBy: actor.userId,
        updatedAt: new Date(),
      },
      { transaction },
    );
    await auditBy(models, actor, { action: 'box.alarm-rule.override', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { ruleId, before: before ? overrideOf(before) : null, after: body } }, transaction);
  });
  ctx.bus.emit('boxChanged', { boxId: box.id });
}

/** Removes a box's override of one rule (back to the defaults); false when there was none. */
export async function removeRuleOverride(ctx: AppContext, actor: AuditActor, box: Box, ruleId: AlarmRuleId): Promise<boolean> {
  const { models } = ctx;
  const before = await models.BoxRuleOverride.findOne({ where: { boxId: box.id, ruleId } });
  if (!before) return false;
  await ctx.sequelize.transaction(async (transaction) => {
    await models.BoxRuleOverride.destroy({ where: { boxId: box.id, ruleId }, transaction });
    await auditBy(models, actor, { action: 'box.alarm-rule.default', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { ruleId, before: overrideOf(before) } }, transaction);
  });
  ctx.bus.emit('boxChanged', { boxId: box.id });
  return true;
}
