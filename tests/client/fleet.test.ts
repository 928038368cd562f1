/**
 * The fleet store for a large fleet: live readings batched per animation frame (one render of the
 * changed card, none of the others), states derived once per change, trouble first, filters and
 * search over a precomputed index. Boxes, sites and customers are invented.
 */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { mount } from '@vue/test-utils';
import { defineComponent, h, nextTick } from 'vue';
import FleetCard from '@/components/FleetCard.vue';
import FleetView from '@/views/fleet/FleetView.vue';
import { useFleetStore } from '@/stores/fleet';
import { useAlarmsStore } from '@/stores/alarms';
import { DRIFT_BAND_K, STALE_AFTER_S, fleetState, type FleetState } from '@/lib/boxStatus';
import { gridWindow } from '@/composables/useVirtualGrid';
import { dateTimeText, siteTimeText } from '@/lib/time';
import type { AlarmDto } from '@shared/schemas/alarms';
import type { FleetBoxStatus } from '@shared/schemas/live';
import { ALARM_RULES } from '@shared/alarms/types';
import { mountView, setup } from './helpers';
import { makeReading, makeStatus } from './boxFixtures';

const NOW_MS = Date.parse('2030-01-15T12:00:00.000Z');
const RULE = ALARM_RULES[0];
const fresh = (over: Parameters<typeof makeReading>[0] = {}) => makeReading({ ts: new Date(NOW_MS - 10_000).toISOString(), ...over });

afterEach(() => {
  document.body.innerHTML = '';
});

/** A frame scheduler the test runs by hand. */
function manualFrames() {
  const queue: Array<() => void> = [];
  return {
    scheduler: (fn: () => void) => {
      queue.push(fn);
    },
    run() {
      const q = queue.splice(0);
      for (const fn of q) fn();
    },
    get queued() {
      return queue.length;
    },
  };
}

function alarm(boxId: number, id: number, priority: AlarmDto['priority']): AlarmDto {
  const at = new Date(NOW_MS - 60_000).toISOString();
  return {
    id,
    boxId,
    boxName: `Box ${boxId}`,
    siteId: 2,
    siteName: 'Harbour Street kitchen',
    customerId: 3,
    ruleId: RULE,
    priority,
    state: 'unacknowledged',
    conditionActive: true,
    value: 8,
    message: 'Box air high',
    raisedAt: at,
    clearedAt: null,
    acknowledgedAt: null,
    acknowledgedBy: null,
    shelvedUntil: null,
    reopenCount: 0,
    updatedAt: at,
  };
}

/** A fleet of `n` invented boxes over 40 sites of 8 customers, every box in range. */
function bigFleet(n: number): FleetBoxStatus[] {
  return Array.from({ length: n }, (_, i) =>
    makeStatus({
      boxId: i + 1,
      boxName: `Box ${String(i + 1).padStart(4, '0')}`,
      kind: i % 4 === 0 ? 'freezer' : 'cooler',
      setpointC: i % 4 === 0 ? -20 : 2,
      highLimitC: i % 4 === 0 ? -15 : 5,
      lowLimitC: i % 4 === 0 ? -28 : -1,
      siteId: 100 + (i % 40),
      siteName: `Site ${i % 40}`,
      siteTimeZone: 'Europe/Berlin',
      customerId: 10 + (i % 8),
      customerName: `Customer ${i % 8}`,
      controllerSerial: `SIM-${String(i + 1).padStart(5, '0')}`,
      latest: fresh({ boxAirC: i % 4 === 0 ? -20 : 2 }),
    }),
  );
}

describe('fleetState', () => {
  // Setpoint 2 °C with limits −1…5 °C: invented demo box. Drift band and stale age: common practice (see boxStatus.ts).
  const box = (over: Partial<FleetBoxStatus> = {}) => makeStatus({ latest: fresh(), ...over });
  const cases: Array<[string, FleetBoxStatus, AlarmDto['priority'] | null, FleetState]> = [
    ['box air at the setpoint is in range', box(), null, 'in-range'],
    [`box air more than ${DRIFT_BAND_K} K from the setpoint is drifting`, box({ latest: fresh({ boxAirC: 2 + DRIFT_BAND_K + 0.5 }) }), null, 'drifting'],
    ['box air past the low limit without an alarm yet is drifting', box({ latest: fresh({ boxAirC: -1.5 }) }), null, 'drifting'],
    ['an active alarm makes it alarm', box({ latest: fresh({ boxAirC: 8 }) }), 'high', 'alarm'],
    ['a defrost in progress is defrosting', box({ latest: fresh({ boxAirC: 6, defrostOn: true }) }), null, 'defrost'],
    ['an open door is door open', box({ latest: fresh({ doorOpen: true, boxAirC: 6 }) }), null, 'door'],
    ['a controller that went offline is offline', box({ online: false }), null, 'offline'],
    ['a box without a controller is offline', box({ controllerSerial: null, online: false }), null, 'offline'],
    ['a box that never reported is offline', box({ latest: null }), null, 'offline'],
    [`a reading older than ${STALE_AFTER_S} s is offline`, box({ latest: makeReading({ ts: new Date(NOW_MS - (STALE_AFTER_S + 5) * 1000).toISOString() }) }), null, 'offline'],
    ['a maintenance window wins over an alarm', box({ maintenanceUntil: new Date(NOW_MS + 3_600_000).toISOString() }), 'critical', 'maintenance'],
    ['an ended maintenance window no longer counts', box({ maintenanceUntil: new Date(NOW_MS - 1000).toISOString() }), null, 'in-range'],
  ];
  it.each(cases)('says %s', (_name, b, priority, expected) => {
    expect(fleetState(b, priority, NOW_MS)).toBe(expected);
  });
});

describe('fleet store', () => {
  it('sorts trouble first: alarms by priority, then offline, drifting and door open, then the rest', async () => {
    const ctx = setup({ role: 'technician' });
    const fleet = useFleetStore(ctx.pinia);
    fleet.configure({ clock: () => NOW_MS, scheduler: manualFrames().scheduler });
    const boxes = [
      makeStatus({ boxId: 1, boxName: 'A in range', latest: fresh() }),
      makeStatus({ boxId: 2, boxName: 'B defrost', latest: fresh({ defrostOn: true }) }),
      makeStatus({ boxId: 3, boxName: 'C door', latest: fresh({ doorOpen: true }) }),
      makeStatus({ boxId: 4, boxName: 'D drifting', latest: fresh({ boxAirC: 7 }) }),
      makeStatus({ boxId: 5, boxName: 'E offline', online: false }),
      makeStatus({ boxId: 6, boxName: 'F low alarm', latest: fresh() }),
      makeStatus({ boxId: 7, boxName: 'G critical alarm', latest: fresh() }),
    ];
    fleet.replaceAll(boxes);
    const alarms = useAlarmsStore(ctx.pinia);
    alarms.upsert(alarm(6, 61, 'low'));
    alarms.upsert(alarm(7, 71, 'critical'));
    await nextTick();
    expect(fleet.select({})).toEqual([7, 6, 5, 4, 3, 2, 1]);
    expect(fleet.stateCounts).toMatchObject({ alarm: 2, offline: 1, drifting: 1, door: 1, defrost: 1, 'in-range': 1, maintenance: 0 });
    expect(fleet.row(7)?.alarmPriority).toBe('critical');
  });

  it('filters by customer, site, kind and state, and searches every word over names and serials', () => {
    const ctx = setup({ role: 'technician' });
    const fleet = useFleetStore(ctx.pinia);
    fleet.configure({ clock: () => NOW_MS, scheduler: manualFrames().scheduler });
    fleet.replaceAll(bigFleet(2000));
    expect(fleet.select({}).length).toBe(2000);
    expect(fleet.select({ customerId: 12 }).every((id) => fleet.row(id)?.box.customerId === 12)).toBe(true);
    expect(fleet.select({ customerId: 12 }).length).toBe(250);
    expect(fleet.select({ siteId: 105 }).length).toBe(50);
    expect(fleet.select({ kind: 'freezer' }).length).toBe(500);
    expect(fleet.select({ state: 'in-range' }).length).toBe(2000);
    expect(fleet.select({ state: 'offline' })).toEqual([]);
    expect(fleet.select({ text: 'sim-01234' })).toEqual([1234]);
    expect(fleet.select({ text: '  SIM-00007 ' })).toEqual([7]);
    // Box 15 is at site 14 of customer 6; both words must match.
    expect(fleet.select({ text: 'site 14 box 0015' })).toEqual([15]);
    expect(fleet.select({ text: 'no such box' })).toEqual([]);
    expect(fleet.siteCounts.find((s) => s.siteId === 105)).toMatchObject({ total: 50, trouble: 0 });
  });

  it('applies many readings at once, shows them on the next frame with one render of that card and none of the others', async () => {
    const ctx = setup({ role: 'technician', unitSystem: 'metric-kpa' });
    const fleet = useFleetStore(ctx.pinia);
    const frames = manualFrames();
    fleet.configure({ clock: () => NOW_MS, scheduler: frames.scheduler });
    fleet.replaceAll(bigFleet(3));
    const renders = new Map<number, number>();
    const Host = defineComponent({ render: () => h('div', [1, 2, 3].map((id) => h(FleetCard, { boxId: id, key: id }))) });
    const w = mount(Host, {
      global: {
        plugins: [ctx.pinia, ctx.router],
        mixins: [
          {
            updated(this: { $options: { __name?: string }; $props: { boxId?: number } }) {
              const id = this.$props.boxId;
              if (this.$options.__name === 'FleetCard' && id !== undefined) renders.set(id, (renders.get(id) ?? 0) + 1);
            },
          },
        ],
      },
    });
    // Box 2 is a cooler at 2 °C (box 1 is a freezer).
    const temp = () => w.find('[data-box-id="2"] [data-test="box-temp"]').text();
    expect(temp()).toContain('2.0');

    for (let i = 1; i <= 50; i++) fleet.applyEvent({ type: 'reading', boxId: 2, reading: fresh({ seq: 1000 + i, ts: new Date(NOW_MS - 10_000 + i * 100).toISOString(), boxAirC: 2 + i / 100 }) });
    // The store has the newest reading at once; the screen waits for the frame.
    expect(fleet.byId[2]?.latest?.boxAirC).toBeCloseTo(2.5, 5);
    expect(frames.queued).toBe(1);
    await nextTick();
    expect(renders.get(2) ?? 0).toBe(0);

    frames.run();
    await nextTick();
    expect(temp()).toContain('2.5');
    expect(renders.get(2)).toBe(1);
    expect(renders.get(1) ?? 0).toBe(0);
    expect(renders.get(3) ?? 0).toBe(0);
  });

  it('names a failed sensor on the card with its reason, and says nothing for a qualifying note such as glide', async () => {
    const ctx = setup({ role: 'technician', unitSystem: 'metric-kpa' });
    const fleet = useFleetStore(ctx.pinia);
    const frames = manualFrames();
    fleet.configure({ clock: () => NOW_MS, scheduler: frames.scheduler });
    const open = { code: 'sensor-open' as const, sensor: 'suctionLineC' as const, affects: ['suctionLineC' as const, 'superheatK' as const], message: 'Suction-line sensor open (reads −60.0 °C): no superheat' };
    const glide = { code: 'glide' as const, affects: ['superheatK' as const], message: 'Two-thermistor method on a blend with glide' };
    fleet.replaceAll([makeStatus({ boxId: 1, latest: fresh({ superheatK: null, flags: [open] }) }), makeStatus({ boxId: 2, latest: fresh({ flags: [glide] }) })]);
    const Host = defineComponent({ render: () => h('div', [1, 2].map((id) => h(FleetCard, { boxId: id, key: id }))) });
    const w = mount(Host, { global: { plugins: [ctx.pinia, ctx.router] } });
    await nextTick();
    const marker = w.find('[data-box-id="1"] [data-test="box-quality"]');
    expect(marker.exists()).toBe(true);
    expect(marker.text()).toContain('Sensor fault');
    expect(marker.attributes('title')).toBe(open.message);
    expect(w.find('[data-box-id="2"] [data-test="box-quality"]').exists()).toBe(false);
  });

  it('turns a box offline on the clock tick once its last reading is stale, without a reading', () => {
    const ctx = setup({ role: 'technician' });
    const fleet = useFleetStore(ctx.pinia);
    const frames = manualFrames();
    fleet.configure({ clock: () => NOW_MS, scheduler: frames.scheduler });
    fleet.replaceAll(bigFleet(2));
    expect(fleet.row(1)?.state).toBe('in-range');
    fleet.tick(NOW_MS + (STALE_AFTER_S + 30) * 1000);
    frames.run();
    expect(fleet.row(1)?.state).toBe('offline');
    expect(fleet.row(1)?.offline).toBe('No recent reading');
    expect(fleet.select({})).toHaveLength(2);
    expect(fleet.stateCounts.offline).toBe(2);
  });
});

describe('gridWindow', () => {
  const o = { rowHeightPx: 158, gapPx: 12, minColumnPx: 250, phoneMaxPx: 600, overscanRows: 2 };
  it('renders only the rows in view plus the overscan, several per row on a desktop width', () => {
    const w = gridWindow(2000, 1232, 200, 900, o);
    expect(w.columns).toBe(4);
    // 900 px of viewport from 200 px down shows rows 0..4 (pitch 170 px), plus 2 rows of overscan.
    expect(w.start).toBe(0);
    expect(w.end).toBe(7 * 4);
    expect(w.totalPx).toBe(500 * 170 - 12);
  });
  it('uses one column on a phone and follows the scroll', () => {
    const w = gridWindow(2000, 358, -170 * 100, 844, o);
    expect(w.columns).toBe(1);
    expect(w.start).toBe(98);
    expect(w.end).toBeLessThanOrEqual(98 + 10);
    expect(w.offsetPx).toBe(98 * 170);
  });
});

describe('FleetView', () => {
  it('puts only a window of the 2,000 cards in the DOM, counts states, and narrows to one box on search', async () => {
    const ctx = setup({ role: 'technician', unitSystem: 'metric-kpa' });
    const fleet = useFleetStore(ctx.pinia);
    fleet.configure({ clock: () => NOW_MS });
    const boxes = bigFleet(2000);
    boxes[1500] = { ...boxes[1500]!, online: false };
    fleet.replaceAll(boxes);
    const w = mountView(FleetView, ctx);
    await nextTick();
    const cards = w.findAll('[data-test="box-card"]');
    expect(cards.length).toBeGreaterThan(0);
    expect(cards.length).toBeLessThan(60);
    // Trouble first: the offline box leads the grid.
    expect(cards[0]?.attributes('data-box-id')).toBe('1501');
    expect(w.find('[data-test="count-offline"]').text()).toContain('1');
    expect(w.find('[data-test="count-in-range"]').text()).toContain('1999');

    vi.useFakeTimers();
    try {
      const input = w.find('input[data-test="fleet-search"]');
      await input.setValue('SIM-01234');
      vi.advanceTimersByTime(200);
    } finally {
      vi.useRealTimers();
    }
    await nextTick();
    await nextTick();
    const found = w.findAll('[data-test="box-card"]');
    expect(found.map((c) => c.attributes('data-box-id'))).toEqual(['1234']);
    expect(w.find('[data-test="fleet-result"]').text()).toContain('1 of 2000 boxes');
    w.unmount();
  });
});

describe('siteTimeText', () => {
  it("shows a time in the site's zone with the zone named, and the date once it is older than 20 h", () => {
    // Europe/Berlin is UTC+1 in January (IANA tz database).
    const t = siteTimeText('2030-01-15T11:59:50.000Z', 'Europe/Berlin', NOW_MS);
    expect(t).toMatch(/12:59/);
    expect(t).toMatch(/GMT\+1|CET/);
    // America/Chicago is UTC−6 in January (IANA tz database).
    const old = siteTimeText('2030-01-13T12:00:00.000Z', 'America/Chicago', NOW_MS);
    expect(old).toMatch(/06:00|6:00/);
    expect(old).toMatch(/Jan/);
    expect(old).toMatch(/CST|GMT-6/);
    expect(siteTimeText(null, 'UTC', NOW_MS)).toBe('—');
  });
});

describe('dateTimeText', () => {
  it('names the zone on every date and time, in the given site zone or else this device’s', () => {
    // America/Chicago is UTC−6 in January (IANA tz database).
    const t = dateTimeText('2030-01-15T18:05:00.000Z', 'America/Chicago');
    expect(t).toMatch(/12:05/);
    expect(t).toMatch(/CST|GMT-6/);
    // The tests run with TZ=UTC: without a zone the device's is used, and named.
    expect(dateTimeText('2030-01-15T18:05:00.000Z')).toMatch(/(18:05|6:05 PM).*(UTC|GMT)/);
    expect(dateTimeText(null)).toBe('—');
  });
});
