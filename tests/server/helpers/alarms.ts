/** Helpers for alarm tests: drive a box above its high limit through MQTT, find alarm mail. */
import type { RunningServer } from '../../../server/main';
import type { Alarm } from '../../../server/models/alarms';
import { connectController, provisionBox, publishTelemetry, reading, waitFor } from './telemetry';
import { call, type Session } from './roles';

/** A box with a short alarm delay (10 min) and a 5 °C high limit, its controller connected. */
export async function boxWithController(srv: RunningServer) {
  const p = await provisionBox(srv, { highLimitC: 5, lowLimitC: 0, setpointC: 2, alarmDelayMin: 10 });
  const client = await connectController(srv.mqttUrl ?? '', p.serial, p.secret);
  return { ...p, client };
}

/**
 * Publishes one reading a minute (reading time) at `boxAirC` from `minutes` minutes ago up to now;
 * delays are evaluated on reading time, so this is `minutes` minutes above the limit.
 */
export async function holdAbove(p: Awaited<ReturnType<typeof boxWithController>>, boxAirC: number, minutes: number): Promise<void> {
  const start = Date.now() - minutes * 60_000;
  for (let i = 0; i <= minutes; i++) await publishTelemetry(p.client, p.serial, reading({ ts: new Date(start + i * 60_000).toISOString(), boxAirC }));
}

/** Waits for the box's alarm of a rule to be stored. */
export function waitForAlarm(srv: RunningServer, boxId: number, ruleId: Alarm['ruleId']): Promise<Alarm> {
  return waitFor(() => srv.ctx.models.Alarm.findOne({ where: { boxId, ruleId } }), 15_000);
}

/** The acknowledgement link token in the newest mail to `email` about the alarm, or null. */
export function ackTokenInMail(srv: RunningServer, email: string, alarmId: number): string | null {
  for (const m of srv.ctx.mailbox?.messages ?? []) {
    if (!m.to.includes(email)) continue;
    const hit = new RegExp(`/alarms/${alarmId}\\?ack=([A-Za-z0-9_-]+)`).exec(m.text);
    if (hit?.[1]) return hit[1];
  }
  return null;
}

/** Puts a user on call around the clock through the admin API; returns the rotation id. */
export async function onCallAllWeek(admin: Session, userId: number): Promise<number> {
  const res = await call(admin, 'post', '/api/v1/oncall/rotations', { name: `Test rotation ${userId}`, timeZone: 'America/Chicago', shifts: [{ userId, weekday: 1, start: '00:00', durationMin: 7 * 24 * 60 }] });
  if (res.status !== 201) throw new Error(`rotation not created: ${res.status} ${res.text}`);
  return res.body.id as number;
}
