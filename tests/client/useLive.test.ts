import { describe, expect, it, vi } from 'vitest';
import { setActivePinia, createPinia } from 'pinia';
import { backoffDelay, createLiveClient, parseLiveFrame, type SocketLike } from '@/composables/useLive';
import { useFleetStore } from '@/stores/fleet';
import type { FleetBoxStatus, LiveEvent, ReadingDto } from '@shared/schemas/live';

class FakeSocket implements SocketLike {
  readyState = 0;
  sent: string[] = [];
  closed = false;
  onopen: ((ev: Event) => void) | null = null;
  onmessage: ((ev: MessageEvent) => void) | null = null;
  onclose: ((ev: CloseEvent) => void) | null = null;
  onerror: ((ev: Event) => void) | null = null;
  constructor(readonly url: string) {}
  send(data: string) {
    this.sent.push(data);
  }
  close() {
    this.closed = true;
    this.readyState = 3;
  }
  open() {
    this.readyState = 1;
    this.onopen?.(new Event('open'));
  }
  message(data: unknown) {
    this.onmessage?.(new MessageEvent('message', { data }));
  }
  drop(code = 1006) {
    this.readyState = 3;
    this.onerror?.(new Event('error'));
    this.onclose?.(new CloseEvent('close', { code }));
  }
}

function rig(random = () => 0.5) {
  const sockets: FakeSocket[] = [];
  const timers: { fn: () => void; ms: number }[] = [];
  const resync = vi.fn();
  const client = createLiveClient({
    url: () => 'ws://127.0.0.1/ws',
    createSocket: (u) => {
      const s = new FakeSocket(u);
      sockets.push(s);
      return s;
    },
    resync,
    baseDelayMs: 1000,
    maxDelayMs: 30_000,
    random,
    setTimer: (fn, ms) => {
      timers.push({ fn, ms });
      return timers.length;
    },
    clearTimer: () => undefined,
  });
  const last = () => {
    const s = sockets[sockets.length - 1];
    if (!s) throw new Error('no socket');
    return s;
  };
  const fire = () => {
    const t = timers.shift();
    if (!t) throw new Error('no timer');
    t.fn();
  };
  return { client, sockets, timers, resync, last, fire };
}

const reading: ReadingDto = {
  ts: '2026-01-05T03:00:00.000Z',
  seq: 42,
  boxAirC: 2.4,
  suctionKPaG: 180,
  suctionLineC: -2,
  saturatedSuctionC: -7.5,
  superheatK: 5.5,
  coilInletC: null,
  dischargeAirC: 0.5,
  liquidKPaG: null,
  liquidLineC: null,
  subcoolingK: null,
  valveSteps: 640,
  valvePercent: 40,
  compressorOn: true,
  fanOn: true,
  defrostOn: false,
  doorOpen: false,
};
const readingFrame = JSON.stringify({ type: 'reading', boxId: 9, reading });

describe('parseLiveFrame', () => {
  it('accepts each documented event', () => {
    expect(parseLiveFrame(readingFrame)).toEqual({ type: 'reading', boxId: 9, reading });
    expect(parseLiveFrame('{"type":"ping","at":"2026-01-05T03:00:00Z"}')).toEqual({ type: 'ping', at: '2026-01-05T03:00:00Z' });
    expect(parseLiveFrame({ type: 'controller', boxId: 9, serial: 'RH-0009', online: false, at: '2026-01-05T03:00:00Z' })?.type).toBe('controller');
    expect(parseLiveFrame({ type: 'hello', userId: 1, serverTime: '2026-01-05T03:00:00Z' })?.type).toBe('hello');
    const alarm = { id: 4, boxId: 9, boxName: 'Walk-in 1', siteId: 2, siteName: 'Site', customerId: 3, ruleId: 'box-air-high', priority: 'high', state: 'unacknowledged', conditionActive: true, value: 7.2, message: 'Box air above the limit', raisedAt: '2026-01-05T03:00:00Z', clearedAt: null, acknowledgedAt: null, acknowledgedBy: null, shelvedUntil: null, reopenCount: 0, updatedAt: '2026-01-05T03:00:00Z' };
    expect(parseLiveFrame({ type: 'alarm', alarm })?.type).toBe('alarm');
    expect(parseLiveFrame({ type: 'alarm', alarm: { ...alarm, state: 'lost' } })).toBeNull();
  });

  it('drops malformed frames', () => {
    const bad = [
      '{not json',
      '"just a string"',
      'null',
      '[]',
      '{"type":"unknown"}',
      JSON.stringify({ type: 'reading', boxId: '9', reading }),
      JSON.stringify({ type: 'reading', boxId: 9, reading: { ...reading, boxAirC: 'cold' } }),
      JSON.stringify({ type: 'reading', boxId: 9, reading: { ...reading, ts: 'yesterday' } }),
      JSON.stringify({ type: 'controller', boxId: 9, serial: 'X', online: 'yes', at: '2026-01-05T03:00:00Z' }),
      JSON.stringify({ type: 'settings', boxId: 9, change: { id: 'c1' } }),
    ];
    for (const f of bad) expect(parseLiveFrame(f), f).toBeNull();
  });
});

describe('backoffDelay', () => {
  it('doubles per attempt, is capped, and jitters within [half, full]', () => {
    expect([0, 1, 2, 3, 4].map((n) => backoffDelay(n, 1000, 30_000, () => 1))).toEqual([1000, 2000, 4000, 8000, 16000]);
    expect(backoffDelay(10, 1000, 30_000, () => 1)).toBe(30_000);
    expect(backoffDelay(40, 1000, 30_000, () => 0)).toBe(15_000);
    expect(backoffDelay(2, 1000, 30_000, () => 0)).toBe(2000);
    expect(backoffDelay(2, 1000, 30_000, () => 0.5)).toBe(3000);
  });
});

describe('createLiveClient', () => {
  it('delivers guarded frames to subscribers until they unsubscribe', () => {
    const r = rig();
    const got: LiveEvent[] = [];
    const off = r.client.subscribe((e) => got.push(e));
    r.client.start();
    r.last().open();
    expect(r.client.status.value).toBe('open');
    r.last().message(readingFrame);
    r.last().message('{garbage');
    r.last().message(JSON.stringify({ type: 'reading', boxId: 9 }));
    expect(got).toHaveLength(1);
    expect(r.client.dropped.value).toBe(2);
    off();
    r.last().message(readingFrame);
    expect(got).toHaveLength(1);
  });

  it('answers ping with pong', () => {
    const r = rig();
    r.client.start();
    r.last().open();
    r.last().message(JSON.stringify({ type: 'ping', at: '2026-01-05T03:00:00Z' }));
    expect(r.last().sent).toEqual(['{"type":"pong"}']);
  });

  it('reconnects with growing, capped delays and resyncs over REST after a reconnect', () => {
    const r = rig(() => 0.5);
    r.client.start();
    r.last().open();
    expect(r.resync).not.toHaveBeenCalled();
    r.last().drop();
    expect(r.client.status.value).toBe('reconnecting');
    const delays: number[] = [];
    for (let i = 0; i < 8; i++) {
      const t = r.timers[0];
      if (!t) throw new Error('expected a scheduled reconnect');
      delays.push(t.ms);
      r.fire();
      r.last().drop(); // the attempt fails again
    }
    // equal jitter with random = 0.5: 0.75 × min(cap, base·2^n)
    expect(delays).toEqual([750, 1500, 3000, 6000, 12000, 22500, 22500, 22500]);
    const t = r.timers[0];
    if (!t) throw new Error('expected a scheduled reconnect');
    r.fire();
    r.resync.mockClear();
    r.last().open();
    expect(r.client.status.value).toBe('open');
    expect(r.client.attempts.value).toBe(0);
    expect(r.resync).toHaveBeenCalledTimes(1);
    r.last().drop();
    expect(r.timers[0]?.ms).toBe(750);
  });

  it('checks the session over REST at once when the server ends it (close 4001)', () => {
    const r = rig();
    r.client.start();
    r.last().open();
    r.last().drop(4001);
    expect(r.resync).toHaveBeenCalledTimes(1);
    expect(r.timers).toHaveLength(1);
  });

  it('stops cleanly and does not reconnect after stop()', () => {
    const r = rig();
    r.client.start();
    const s = r.last();
    s.open();
    r.client.stop();
    expect(s.closed).toBe(true);
    expect(r.client.status.value).toBe('stopped');
    s.drop();
    expect(r.timers).toHaveLength(0);
    expect(r.sockets).toHaveLength(1);
  });
});

describe('fleet store and live events', () => {
  const box: FleetBoxStatus = {
    boxId: 9,
    boxName: 'Walk-in cooler 1',
    kind: 'cooler',
    valveType: 'eev',
    refrigerant: 'R-448A',
    setpointC: 2,
    highLimitC: 5,
    lowLimitC: -1,
    superheatTargetK: 4.5,
    siteId: 1,
    siteName: 'Example Market North',
    customerId: 3,
    customerName: 'Example Foods',
    controllerSerial: 'RH-0009',
    online: false,
    lastSeenAt: null,
    latest: { ...reading, ts: '2026-01-05T02:59:00.000Z', seq: 41, boxAirC: 3 },
    maintenanceUntil: null,
  };

  it('applies newer readings and controller changes, ignores older readings and unknown boxes', () => {
    setActivePinia(createPinia());
    const fleet = useFleetStore();
    fleet.replaceAll([box]);
    fleet.applyEvent({ type: 'reading', boxId: 9, reading });
    expect(fleet.byId[9]?.latest?.boxAirC).toBe(2.4);
    expect(fleet.byId[9]?.online).toBe(true);
    fleet.applyEvent({ type: 'reading', boxId: 9, reading: { ...reading, ts: '2026-01-05T02:00:00.000Z', boxAirC: 9 } });
    expect(fleet.byId[9]?.latest?.boxAirC).toBe(2.4);
    fleet.applyEvent({ type: 'controller', boxId: 9, serial: 'RH-0009', online: false, at: '2026-01-05T03:01:00.000Z' });
    expect(fleet.byId[9]?.online).toBe(false);
    fleet.applyEvent({ type: 'reading', boxId: 77, reading });
    expect(Object.keys(fleet.byId)).toEqual(['9']);
    expect(fleet.groups[0]?.sites[0]?.boxes[0]?.boxId).toBe(9);
  });
});
