/**
 * A box in maintenance says so everywhere it appears: its fleet card, its page header and its
 * alarm rows; the fleet store learns the window from the live socket; a technician can end it.
 * The test process runs with TZ=UTC (npm scripts), so times print in UTC.
 */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import { defineComponent, h } from 'vue';
import BoxCard from '@/components/BoxCard.vue';
import AlarmListItem from '@/components/AlarmListItem.vue';
import BoxDetailView from '@/views/boxes/BoxDetailView.vue';
import AlarmDetailActions from '@/views/alarms/AlarmDetailActions.vue';
import { useFleetStore } from '@/stores/fleet';
import { installHttpWiring } from '@/api/wiring';
import { parseLiveFrame } from '@/composables/liveFrame';
import type { AlarmDto } from '@shared/schemas/alarms';
import type { FleetBoxStatus } from '@shared/schemas/live';
import { json, mountView, problem, setup, stubFetch } from './helpers';
import { makeBox, makeStatus, NOW_ISO } from './boxFixtures';

const NOW_MS = Date.parse(NOW_ISO);
const UNTIL = '2030-01-15T14:30:00.000Z';
const HELD_TEXT = 'In maintenance until 14:30 (UTC) — alarms held';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

function mountCard(box: FleetBoxStatus) {
  const ctx = setup({ role: 'technician', unitSystem: 'metric-kpa' });
  const Host = defineComponent({ render: () => h(BoxCard, { box, now: NOW_MS }) });
  return mount(Host, { global: { plugins: [ctx.pinia, ctx.router] } });
}

function makeAlarm(p: Partial<AlarmDto> = {}): AlarmDto {
  return {
    id: 1,
    boxId: 5,
    boxName: 'Walk-in cooler 1',
    siteName: 'Harbour Street kitchen',
    siteId: 2,
    customerId: 3,
    ruleId: 'box-air-high',
    priority: 'high',
    state: 'suppressed',
    conditionActive: true,
    value: 8.2,
    message: 'Box air above the high limit.',
    raisedAt: NOW_ISO,
    clearedAt: null,
    acknowledgedAt: null,
    acknowledgedBy: null,
    shelvedUntil: null,
    reopenCount: 0,
    updatedAt: NOW_ISO,
    ...p,
  };
}

describe('the fleet card of a box in maintenance', () => {
  it('shows "In maintenance until HH:MM (zone) — alarms held" with an icon', () => {
    const w = mountCard(makeStatus({ maintenanceUntil: UNTIL }));
    const note = w.find('[data-test="box-maintenance"]');
    expect(note.text()).toBe(HELD_TEXT);
    expect(note.find('svg').exists()).toBe(true);
  });

  it('shows nothing when the box is not in maintenance or the window is over', () => {
    expect(mountCard(makeStatus({ maintenanceUntil: null })).find('[data-test="box-maintenance"]').exists()).toBe(false);
    expect(mountCard(makeStatus({ maintenanceUntil: '2030-01-15T11:00:00.000Z' })).find('[data-test="box-maintenance"]').exists()).toBe(false);
  });
});

describe('the box page header', () => {
  it('shows the maintenance text from the box answer when the fleet status is not loaded', async () => {
    const ctx = setup({ role: 'technician', unitSystem: 'metric-kpa' });
    installHttpWiring(ctx.router, ctx.pinia);
    stubFetch((c) => {
      if (c.url === '/api/v1/boxes/5') return json(200, makeBox({ maintenanceUntil: UNTIL }));
      if (c.url.startsWith('/api/v1/boxes/5/readings')) return json(200, { boxId: 5, resolution: 'raw', from: '', to: '', points: [] });
      if (c.url === '/api/v1/boxes/5/settings/changes') return json(200, []);
      return problem(404, { type: 'x', title: 'Not found' });
    });
    await ctx.router.push('/boxes/5');
    const w = mountView(BoxDetailView, ctx, { id: '5' });
    await flushPromises();
    expect(w.find('.rh-page-head [data-test="box-maintenance"]').text()).toBe(HELD_TEXT);
  });
});

describe('the fleet store and the live maintenance frame', () => {
  it('applies a valid maintenance frame and its end, and drops a malformed one', () => {
    const ctx = setup({ role: 'technician' });
    const fleet = useFleetStore(ctx.pinia);
    fleet.replaceAll([makeStatus()]);
    const start = parseLiveFrame(JSON.stringify({ type: 'maintenance', boxId: 5, until: UNTIL }));
    expect(start).toEqual({ type: 'maintenance', boxId: 5, until: UNTIL });
    if (start) fleet.applyEvent(start);
    expect(fleet.byId[5]?.maintenanceUntil).toBe(UNTIL);
    expect(parseLiveFrame(JSON.stringify({ type: 'maintenance', boxId: 5, until: 'soon' }))).toBeNull();
    const end = parseLiveFrame(JSON.stringify({ type: 'maintenance', boxId: 5, until: null }));
    if (end) fleet.applyEvent(end);
    expect(fleet.byId[5]?.maintenanceUntil).toBeNull();
  });
});

describe('alarm rows and actions of a box in maintenance', () => {
  it('shows the maintenance text on the alarm row of the box', () => {
    const ctx = setup({ role: 'technician' });
    useFleetStore(ctx.pinia).replaceAll([makeStatus({ maintenanceUntil: UNTIL })]);
    const Host = defineComponent({ render: () => h('ul', [h(AlarmListItem, { alarm: makeAlarm(), now: NOW_MS })]) });
    const w = mount(Host, { global: { plugins: [ctx.pinia, ctx.router] } });
    expect(w.find('[data-test="box-maintenance"]').text()).toBe(HELD_TEXT);
  });

  it('offers "End maintenance" to a technician and ends it through DELETE /boxes/:id/maintenance', async () => {
    const ctx = setup({ role: 'technician' });
    installHttpWiring(ctx.router, ctx.pinia);
    const fleet = useFleetStore(ctx.pinia);
    fleet.replaceAll([makeStatus({ maintenanceUntil: UNTIL })]);
    const { calls } = stubFetch((c) => (c.method === 'DELETE' && c.url === '/api/v1/boxes/5/maintenance' ? json(204, null) : problem(404, { type: 'x', title: 'Not found' })));
    const w = mountView(AlarmDetailActions, ctx, { alarm: makeAlarm() });
    await w.find('[data-test="maintenance-end"]').trigger('click');
    await flushPromises();
    expect(calls.map((c) => [c.method, c.url])).toEqual([['DELETE', '/api/v1/boxes/5/maintenance']]);
    expect(fleet.byId[5]?.maintenanceUntil).toBeNull();
  });

  it('does not offer "End maintenance" for an alarm of a box that is not in maintenance', () => {
    const ctx = setup({ role: 'technician' });
    useFleetStore(ctx.pinia).replaceAll([makeStatus()]);
    const w = mountView(AlarmDetailActions, ctx, { alarm: makeAlarm({ state: 'unacknowledged' }) });
    expect(w.find('[data-test="maintenance-end"]').exists()).toBe(false);
    expect(w.find('[data-test="maintenance-start"]').exists()).toBe(true);
  });
});
