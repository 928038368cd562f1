// Reading quality end to end: readings published as a controller through the test server's real
// MQTT ingest, then read back from the database and through the API (latest, fleet, readings).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import type { FleetBoxStatus, ReadingDto, ReadingFlag } from '../../shared/schemas/live';
import { factories, signIn, type Agent } from './helpers/app';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';

let srv: RunningServer;
let url: string;
let admin: { agent: Agent; csrf: string };

beforeAll(async () => {
  srv = await startTelemetryServer();
  url = srv.mqttUrl ?? '';
  const u = await factories(srv).user('admin');
  admin = await signIn(srv, u.email, u.password);
});
afterAll(async () => srv.stop());

const flagsOf = (row: Record<string, unknown> | undefined): ReadingFlag[] => (row?.quality_flags ? (JSON.parse(String(row.quality_flags)) as ReadingFlag[]) : []);

async function rowsWhen(boxId: number, n: number) {
  return waitFor(async () => {
    const rs = await storedRows(srv, boxId);
    return rs.length >= n ? rs : null;
  });
}

async function latest(boxId: number): Promise<ReadingDto> {
  const res = await admin.agent.get(`/api/v1/boxes/${boxId}/latest`).expect(200);
  return res.body as ReadingDto;
}

describe('failed sensors give no derived value and a stated reason', () => {
  it.each([
    ['open', -60, 'sensor-open', /Suction-line sensor open \(reads −60\.0 °C\) — no superheat/],
    ['shorted', 130, 'sensor-shorted', /Suction-line sensor shorted \(reads 130\.0 °C\) — no superheat/],
  ] as const)('a suction-line thermistor that is %s stores no superheat and says why in the row, the latest reading and the fleet status', async (_name, lineC, code, words) => {
    // The ends of the thermistor input (telemetry range −60 … 130 °C) are open and shorted NTCs: common practice.
    const p = await provisionBox(srv, { refrigerant: 'R-404A' });
    const c = await connectController(url, p.serial, p.secret);
    await publishTelemetry(c, p.serial, reading({ suctionKPaG: 300, suctionLineC: lineC }));
    const [row] = await rowsWhen(p.box.id, 1);
    expect(row?.superheat_k).toBeNull();
    // The pressure is fine: saturated suction is still computed from it.
    expect(row?.saturated_suction_c).not.toBeNull();
    const flags = flagsOf(row);
    expect(flags.map((f) => f.code)).toEqual([code]);
    expect(flags[0]?.affects).toEqual(['suctionLineC', 'superheatK']);
    expect(flags[0]?.message).toMatch(words);
    const dto = await latest(p.box.id);
    expect(dto.superheatK).toBeNull();
    expect(dto.flags?.[0]?.code).toBe(code);
    const fleet = (await admin.agent.get('/api/v1/fleet/status').expect(200)).body as FleetBoxStatus[];
    expect(fleet.find((b) => b.boxId === p.box.id)?.latest?.flags?.[0]?.message).toMatch(words);
    const from = new Date(Date.now() - 3_600_000).toISOString();
    const to = new Date(Date.now() + 60_000).toISOString();
    const chart = await admin.agent.get(`/api/v1/boxes/${p.box.id}/readings`).query({ from, to, resolution: 'raw' }).expect(200);
    expect(chart.body.points[0].superheatAvgK).toBeNull();
    expect(chart.body.points[0].flags[0].code).toBe(code);
    await c.endAsync();
  });

  it('an open suction transducer end blanks saturated suction and superheat; an out-of-range box-air reading is flagged', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-404A' });
    const c = await connectController(url, p.serial, p.secret);
    // −101 kPa(g) is the bottom end of the suction input (shared/rules/sensors.ts SUCTION_MIN_KPAG); −55 °C box air is outside what a walk-in sees (our choice, quality.ts).
    await publishTelemetry(c, p.serial, reading({ suctionKPaG: -101, boxAirC: -55 }));
    const [row] = await rowsWhen(p.box.id, 1);
    expect(row?.saturated_suction_c).toBeNull();
    expect(row?.superheat_k).toBeNull();
    const flags = flagsOf(row);
    expect(flags.find((f) => f.sensor === 'suctionKPaG')?.message).toMatch(/Suction transducer at the bottom end of its range .* — no saturated suction or superheat/);
    expect(flags.find((f) => f.sensor === 'boxAirC')?.code).toBe('sensor-out-of-range');
    await c.endAsync();
  });

  it('a suction-line thermistor stuck on one value for over 3 h while the compressor cycled stops giving superheat', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-404A' });
    const c = await connectController(url, p.serial, p.secret);
    const t0 = Date.now() - 4 * 3_600_000;
    // Every 10 min for 4 h: the compressor cycles (on 20 min, off 10 min), box air and pressure move, the line reads −2.0 °C throughout.
    const n = 25;
    for (let i = 0; i < n; i++) {
      await publishTelemetry(c, p.serial, reading({ ts: new Date(t0 + i * 600_000).toISOString(), suctionLineC: -2, compressorOn: i % 3 !== 2, boxAirC: 2 + (i % 3) * 0.4, suctionKPaG: 280 + (i % 3) * 30 }));
    }
    const rows = await rowsWhen(p.box.id, n);
    // Before 3 h the flat line is not yet suspicious.
    expect(rows[5]?.superheat_k).not.toBeNull();
    expect(flagsOf(rows[5])).toEqual([]);
    const last = rows[n - 1];
    expect(last?.superheat_k).toBeNull();
    const stuck = flagsOf(last).find((f) => f.code === 'sensor-stuck');
    expect(stuck?.sensor).toBe('suctionLineC');
    expect(stuck?.message).toMatch(/Suction-line sensor stuck \(−2\.0 °C unchanged for 4\.0 h while the compressor cycled\) — no superheat/);
    // The box-air reading moved all along: never flagged.
    expect(flagsOf(last).some((f) => f.sensor === 'boxAirC')).toBe(false);
    await c.endAsync();
  });

  it('a box-air sensor stuck for over 3 h with the compressor off is flagged: stuck cold, it keeps the compressor from starting while the box warms', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-404A' });
    const c = await connectController(url, p.serial, p.secret);
    const t0 = Date.now() - 4 * 3_600_000;
    // Every 10 min for 4 h, the compressor never starts and the box-air reading holds 3.0 °C; the suction line warms as a box left to warm would.
    const n = 25;
    for (let i = 0; i < n; i++) {
      await publishTelemetry(c, p.serial, reading({ ts: new Date(t0 + i * 600_000).toISOString(), boxAirC: 3, compressorOn: false, suctionLineC: 3 + i * 0.3, suctionKPaG: 500 + i * 4 }));
    }
    const rows = await rowsWhen(p.box.id, n);
    expect(flagsOf(rows[5])).toEqual([]);
    const stuck = flagsOf(rows[n - 1]).find((f) => f.code === 'sensor-stuck');
    expect(stuck?.sensor).toBe('boxAirC');
    expect(stuck?.message).toMatch(/Box-air sensor stuck \(3\.0 °C unchanged for 4\.0 h with the compressor off\)/);
    // The suction line moved: not flagged.
    expect(flagsOf(rows[n - 1]).some((f) => f.sensor === 'suctionLineC')).toBe(false);
    await c.endAsync();
  });
});

describe('conversion notes', () => {
  it('a pressure below the refrigerant table and a step count beyond full travel leave the values blank with the reason kept', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-404A' });
    const c = await connectController(url, p.serial, p.secret);
    // −95 kPa(g) at sea level is 6.3 kPa abs, below any walk-in evaporating pressure the R-404A tables cover; 2,000 steps on a 1,600-step valve is impossible.
    await publishTelemetry(c, p.serial, reading({ suctionKPaG: -95, valveSteps: 2000 }));
    const [row] = await rowsWhen(p.box.id, 1);
    expect(row?.saturated_suction_c).toBeNull();
    expect(row?.valve_percent).toBeNull();
    const notes = flagsOf(row).filter((f) => f.code === 'conversion');
    expect(notes.find((f) => f.affects.includes('superheatK'))?.message).toMatch(/R-404A|range|pressure/i);
    expect(notes.find((f) => f.affects.includes('valvePercent'))?.message).toMatch(/steps must be an integer in 0\.\.1600, got 2000/);
    const dto = await latest(p.box.id);
    expect(dto.flags?.filter((f) => f.code === 'conversion')).toHaveLength(2);
    await c.endAsync();
  });
});

describe('two-thermistor boxes', () => {
  it('an R-448A box takes superheat against the dew point (glide-aware) and carries the glide warning', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-448A', saturationMethod: 'coil-thermistor' });
    const c = await connectController(url, p.serial, p.secret);
    await publishTelemetry(c, p.serial, reading({ suctionLineC: -8, coilInletC: -20 }));
    const [row] = await rowsWhen(p.box.id, 1);
    // CoolProp 8.0.0 (HEOS::R448A.mix): bubble pressure at −20 °C is 311.00 kPa abs; the dew point at
    // that pressure is −13.737 °C, so the glide is 6.263 K and superheat = −8 − (−13.737) = 5.74 K
    // (outlet − inlet would read 12.0 K).
    expect(Number(row?.saturated_suction_c)).toBeCloseTo(-13.737, 1);
    expect(Number(row?.superheat_k)).toBeCloseTo(5.737, 1);
    expect(Number(row?.glide_k)).toBeCloseTo(6.263, 1);
    const glide = flagsOf(row).find((f) => f.code === 'glide');
    expect(glide?.affects).toContain('superheatK');
    expect(glide?.message).toMatch(/R-448A glides about 6\.3 K .* not outlet − inlet \(12\.0 K\)/);
    const dto = await latest(p.box.id);
    expect(dto.glideK).toBeCloseTo(6.263, 1);
    expect(dto.flags?.some((f) => f.code === 'glide')).toBe(true);
    await c.endAsync();
  });
});

describe('subcooling', () => {
  it('negative subcooling is stored with a flag naming flash gas or a bad sensor', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-404A' });
    const c = await connectController(url, p.serial, p.secret);
    // CoolProp 8.0.0 (HEOS::R404A.mix): the bubble point at 1,829.41 kPa abs is 40.00 °C, i.e. at 1,728.1 kPa(g)
    // at sea level (101.325 kPa, U.S. Standard Atmosphere 1976): a 42 °C liquid line is 2.0 K above it.
    await publishTelemetry(c, p.serial, reading({ liquidKPaG: 1728.1, liquidLineC: 42 }));
    const [row] = await rowsWhen(p.box.id, 1);
    expect(Number(row?.subcooling_k)).toBeCloseTo(-2, 1);
    const f = flagsOf(row).find((x) => x.code === 'negative-subcooling');
    expect(f?.affects).toEqual(['subcoolingK']);
    expect(f?.message).toMatch(/Negative subcooling \(−2\.0 K\): flash gas .* bad liquid-line sensor/);
    await c.endAsync();
  });
});

describe('gauge reference of the transducers', () => {
  it('a sealed-gauge controller at 1,600 m gives the same saturated suction as a vented one (and an absolute one)', async () => {
    // U.S. Standard Atmosphere 1976 at 1,600 m: 83.53 kPa (troposphere equation; the standard's table, from memory, 8.3528E+4 Pa).
    const siteAtmKPa = 83.53;
    // Sealed gauges read against standard sea-level atmosphere, 101.325 kPa (U.S. Standard Atmosphere 1976).
    const seaLevelKPa = 101.325;
    const absKPa = 300;
    const boxes = await Promise.all(['vented-gauge', 'sealed-gauge', 'absolute'].map(() => provisionBox(srv, { refrigerant: 'R-404A' }, { elevationM: 1600 })));
    const [vented, sealed, absolute] = boxes;
    if (!vented || !sealed || !absolute) throw new Error('three boxes expected');
    // Declared through the controller API (admin).
    for (const [b, ref] of [[sealed, 'sealed-gauge'], [absolute, 'absolute']] as const) {
      const res = await admin.agent.patch(`/api/v1/controllers/${b.controller.id}`).set('x-csrf-token', admin.csrf).send({ gaugeReference: ref });
      expect(res.status, res.text).toBe(200);
      expect(res.body.gaugeReference).toBe(ref);
    }
    const u = await factories(srv).user('technician');
    const tech = await signIn(srv, u.email, u.password);
    expect((await tech.agent.patch(`/api/v1/controllers/${sealed.controller.id}`).set('x-csrf-token', tech.csrf).send({ gaugeReference: 'vented-gauge' })).status).toBe(403);
    const bad = await admin.agent.patch(`/api/v1/controllers/${sealed.controller.id}`).set('x-csrf-token', admin.csrf).send({ gaugeReference: 'barometric' });
    expect(bad.status).toBe(400);
    expect(bad.headers['content-type']).toMatch(/application\/problem\+json/);
    const reported = [absKPa - siteAtmKPa, absKPa - seaLevelKPa, absKPa];
    for (const [i, b] of boxes.entries()) {
      const c = await connectController(url, b.serial, b.secret);
      await publishTelemetry(c, b.serial, reading({ suctionKPaG: reported[i] ?? 0, suctionLineC: -15 }));
      await c.endAsync();
    }
    const sat = await Promise.all(boxes.map(async (b) => Number((await rowsWhen(b.box.id, 1))[0]?.saturated_suction_c)));
    // CoolProp 8.0.0 (HEOS::R404A.mix): dew point at 300 kPa abs is −20.02 °C.
    for (const s of sat) expect(s).toBeCloseTo(-20.02, 1);
    // Stored as gauge at the site, whatever the transducer's reference: 300 − 83.53 = 216.5 kPa(g).
    const dto = await latest(sealed.box.id);
    expect(dto.suctionKPaG).toBeCloseTo(absKPa - siteAtmKPa, 1);
  });
});

describe('readings replayed from the controller buffer', () => {
  it('a buffered reading from before a refrigerant change is converted with the old refrigerant', async () => {
    const p = await provisionBox(srv, { refrigerant: 'R-404A' });
    const c = await connectController(url, p.serial, p.secret);
    const beforeChange = Date.now() - 3_600_000;
    await publishTelemetry(c, p.serial, reading({ ts: new Date(beforeChange - 600_000).toISOString(), suctionKPaG: 300 - 101.325 }));
    await rowsWhen(p.box.id, 1);
    await p.box.update({ refrigerant: 'R-134a' });
    srv.ctx.bus.emit('boxChanged', { boxId: p.box.id });
    await waitFor(async () => {
      const h = await srv.ctx.sequelize.query<{ n: number }>('SELECT COUNT(*) AS n FROM box_settings_history WHERE box_id = ?', { replacements: [p.box.id], type: QueryTypes.SELECT });
      return Number(h[0]?.n) === 2;
    });
    // The controller was offline: a reading taken an hour ago arrives now, then a current one.
    await publishTelemetry(c, p.serial, reading({ ts: new Date(beforeChange).toISOString(), suctionKPaG: 300 - 101.325 }));
    await publishTelemetry(c, p.serial, reading({ ts: new Date().toISOString(), suctionKPaG: 300 - 101.325 }));
    const rows = await rowsWhen(p.box.id, 3);
    expect(rows.map((r) => r.refrigerant)).toEqual(['R-404A', 'R-404A', 'R-134a']);
    // CoolProp 8.0.0: dew point at 300 kPa abs is −20.02 °C for R-404A (HEOS::R404A.mix) and +0.67 °C for R-134a.
    expect(Number(rows[1]?.saturated_suction_c)).toBeCloseTo(-20.02, 1);
    expect(Number(rows[2]?.saturated_suction_c)).toBeCloseTo(0.67, 1);
    await c.endAsync();
  });
});
