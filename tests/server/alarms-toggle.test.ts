/**
 * ALARMS_ENABLED: the switch bench:ingest uses to measure the ingest with alarm evaluation on and
 * off in one run. On by default; off starts no alarm service and the ingest still stores readings.
 */
import { afterEach, describe, expect, it } from 'vitest';
import type { MqttClient } from 'mqtt';
import { loadConfig } from '../../server/config';
import { AlarmService } from '../../server/alarms/service';
import type { RunningServer } from '../../server/main';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';

describe('ALARMS_ENABLED', () => {
  let srv: RunningServer | null = null;
  let client: MqttClient | null = null;

  afterEach(async () => {
    await client?.endAsync();
    client = null;
    await srv?.stop();
    srv = null;
  });

  it('is on when unset and off only when set to 0 or false', () => {
    expect(loadConfig({}).ALARMS_ENABLED).toBe(true);
    expect(loadConfig({ ALARMS_ENABLED: '1' }).ALARMS_ENABLED).toBe(true);
    expect(loadConfig({ ALARMS_ENABLED: '0' }).ALARMS_ENABLED).toBe(false);
    expect(loadConfig({ ALARMS_ENABLED: 'false' }).ALARMS_ENABLED).toBe(false);
  });

  it('refuses a value that is not a switch', () => {
    expect(() => loadConfig({ ALARMS_ENABLED: 'maybe' })).toThrow(/ALARMS_ENABLED/);
  });

  it('starts the alarm service with the telemetry when set to 1', async () => {
    srv = await startTelemetryServer({ ALARMS_ENABLED: '1' });
    expect(srv.alarms).toBeInstanceOf(AlarmService);
  });

  it('starts no alarm service when set to 0, and the ingest still stores every reading', async () => {
    srv = await startTelemetryServer({ ALARMS_ENABLED: '0' });
    expect(srv.alarms).toBeNull();

    const p = await provisionBox(srv);
    client = await connectController(srv.mqttUrl ?? '', p.serial, p.secret);
    await publishTelemetry(client, p.serial, reading());
    await publishTelemetry(client, p.serial, reading());
    const rows = await waitFor(async () => {
      const r = await storedRows(srv as RunningServer, p.box.id);
      return r.length === 2 ? r : null;
    });
    expect(rows).toHaveLength(2);
  });
});
