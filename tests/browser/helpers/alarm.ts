/** Raises a real box-air alarm through MQTT readings, for browser tests that need an alarm on screen. */
import type { MqttClient } from 'mqtt';
import type { RunningServer } from '../../../server/main';
import { connectController, provisionBox, publishTelemetry, reading, waitFor } from '../../server/helpers/telemetry';

/**
 * Provisions a cooler with a 5 °C high limit (41 °F: FDA Food Code 3-501.16(A)(2)) and a 5-minute delay,
 * publishes 8 minutes (reading time) of 9 °C box air, and waits for the stored alarm.
 */
export async function raiseBoxAirAlarm(srv: RunningServer): Promise<{ box: Awaited<ReturnType<typeof provisionBox>>; ctl: MqttClient; alarmId: number }> {
  const box = await provisionBox(srv, { highLimitC: 5, alarmDelayMin: 5 });
  const ctl = await connectController(srv.mqttUrl ?? '', box.serial, box.secret);
  const start = Date.now() - 8 * 60_000;
  for (let i = 0; i <= 16; i++) await publishTelemetry(ctl, box.serial, reading({ boxAirC: 9, ts: new Date(start + i * 30_000).toISOString() }));
  const alarm = await waitFor(() => srv.ctx.models.Alarm.findOne({ where: { boxId: box.box.id, ruleId: 'box-air-high' } }), 15_000);
  return { box, ctl, alarmId: alarm.id };
}
