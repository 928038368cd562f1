/** Alarm rows to DTOs, with box, site and user names looked up in bulk. */
import type { AlarmDto, AlarmNotificationDto, AlarmTransitionDto } from '../../shared/schemas/alarms';
import type { Models } from '../models';
import type { Alarm, AlarmNotification, AlarmTransition } from '../models/alarms';

const iso = (d: Date | null) => (d ? d.toISOString() : null);

/** Presents alarms (one query each for boxes, sites and users named by them). */
export async function toAlarmDtos(models: Models, alarms: Alarm[]): Promise<AlarmDto[]> {
  if (alarms.length === 0) return [];
  const boxes = await models.Box.findAll({ where: { id: [...new Set(alarms.map((a) => a.boxId))] }, attributes: ['id', 'name'] });
  const sites = await models.Site.findAll({ where: { id: [...new Set(alarms.map((a) => a.siteId))] }, attributes: ['id', 'name'] });
  const userIds = [...new Set(alarms.map((a) => a.acknowledgedBy).filter((x): x is number => x !== null))];
  const users = userIds.length ? await models.User.findAll({ where: { id: userIds }, attributes: ['id', 'name'] }) : [];
  const boxName = new Map(boxes.map((b) => [b.id, b.name]));
  const siteName = new Map(sites.map((s) => [s.id, s.name]));
  const userName = new Map(users.map((u) => [u.id, u.name]));
  return alarms.map((a) => ({
    id: a.id,
    boxId: a.boxId,
    boxName: boxName.get(a.boxId) ?? '',
    siteId: a.siteId,
    siteName: siteName.get(a.siteId) ?? '',
    customerId: a.customerId,
    ruleId: a.ruleId,
    priority: a.priority,
    state: a.state,
    conditionActive: a.conditionActive,
    value: a.value,
    message: a.message,
    raisedAt: a.raisedAt.toISOString(),
    clearedAt: iso(a.clearedAt),
    acknowledgedAt: iso(a.acknowledgedAt),
    acknowledgedBy: a.acknowledgedBy === null ? null : { id: a.acknowledgedBy, name: userName.get(a.acknowledgedBy) ?? '' },
    shelvedUntil: iso(a.shelvedUntil),
    reopenCount: a.reopenCount,
    updatedAt: a.updatedAt.toISOString(),
  }));
}

/** Presents one alarm. */
export async function toAlarmDto(models: Models, alarm: Alarm): Promise<AlarmDto> {
  const [dto] = await toAlarmDtos(models, [alarm]);
  if (!dto) throw new Error('unreachable: one alarm in, one DTO out');
  return dto;
}

/** Presents transitions with the acting user's name. */
export async function toTransitionDtos(models: Models, rows: AlarmTransition[]): Promise<AlarmTransitionDto[]> {
  const ids = [...new Set(rows.map((r) => r.userId).filter((x): x is number => x !== null))];
  const users = ids.length ? await models.User.findAll({ where: { id: ids }, attributes: ['id', 'name'] }) : [];
  const name = new Map(users.map((u) => [u.id, u.name]));
  return rows.map((r) => ({
    id: Number(r.id),
    at: r.at.toISOString(),
    action: r.action,
    fromState: r.fromState,
    toState: r.toState,
    userId: r.userId,
    userName: r.userId === null ? null : (name.get(r.userId) ?? null),
    note: r.note,
  }));
}

/** Presents the notification log. */
export function toNotificationDtos(rows: AlarmNotification[]): AlarmNotificationDto[] {
  return rows.map((n) => ({ id: Number(n.id), at: n.at.toISOString(), channel: n.channel, recipient: n.recipient, status: n.status, error: n.error, level: n.level }));
}
