/** The live frame guard keeps what the screens show with a reading: its stated reasons and the gas-cooler figures. */
import { describe, expect, it } from 'vitest';
import { parseLiveFrame } from '@/composables/liveFrame';
import { makeReading } from './boxFixtures';

describe('parseLiveFrame reading', () => {
  it('keeps the flags, glide and gas-cooler approach of a reading (a failed sensor’s reason must not vanish at the next live reading)', () => {
    const flags = [{ code: 'sensor-open', sensor: 'suctionLineC', affects: ['suctionLineC', 'superheatK'], message: 'Suction-line sensor open (reads −60.0 °C) — no superheat' }];
    const reading = { ...makeReading({ superheatK: null }), flags, glideK: 4.1, condenserAirC: 30, approachK: 3 };
    const ev = parseLiveFrame(JSON.stringify({ type: 'reading', boxId: 7, reading }));
    expect(ev).toMatchObject({ type: 'reading', boxId: 7, reading: { flags, glideK: 4.1, condenserAirC: 30, approachK: 3 } });
  });

  it('drops a reading frame whose flag names an unknown code or value', () => {
    const bad = (flag: object) => parseLiveFrame(JSON.stringify({ type: 'reading', boxId: 7, reading: { ...makeReading(), flags: [flag] } }));
    expect(bad({ code: 'made-up', affects: ['superheatK'], message: 'x' })).toBeNull();
    expect(bad({ code: 'conversion', affects: ['__proto__'], message: 'x' })).toBeNull();
  });
});
