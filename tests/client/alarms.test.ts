/**
 * The alarm screens: the attention list (order, priority shown by text and shape, one-tap
 * acknowledge), live alarm events, the e-mailed acknowledgement link and role-based actions.
 */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import { defineComponent, h } from 'vue';
import type { Role } from '@shared/domain';
import type { AlarmDetailDto, AlarmDto } from '@shared/schemas/alarms';
import type { LiveEvent } from '@shared/schemas/live';
import AlarmsView from '@/views/alarms/AlarmsView.vue';
import BoxCard from '@/components/BoxCard.vue';
import AlarmDetailView from '@/views/alarms/AlarmDetailView.vue';
import { installHttpWiring } from '@/api/wiring';
import { LiveAlarmFrame, alarmListQuery } from '@/api/alarms';
import { useAlarmsStore } from '@/stores/alarms';
import { json, mountView, problem, setup, stubFetch, type Call } from './helpers';
import { makeStatus } from './boxFixtures';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const T0 = '2026-12-03T03:00:00.000Z';

function makeAlarm(p: Partial<AlarmDto> = {}): AlarmDto {
  return {
    id: 1,
    boxId: 5,
    boxName: 'Walk-in cooler 1',
    siteName: 'Harbour Street Kitchen',
    siteId: 2,
    customerId: 3,
    ruleId: 'box-air-high',
    priority: 'high',
    state: 'unacknowledged',
    conditionActive: true,
    value: 8.2,
    message: 'Box air above the high limit. Box air is not food temperature.',
    raisedAt: T0,
    clearedAt: null,
    acknowledgedAt: null,
    acknowledgedBy: null,
    shelvedUntil: null,
    reopenCount: 0,
    updatedAt: T0,
    ...p,
  };
}

function makeDetail(p: Partial<AlarmDto> = {}): AlarmDetailDto {
  return { ...makeAlarm(p), transitions: [], notifications: [] };
}

/** Makes useIsPhone() see a 390 px wide screen. */
function asPhone() {
  vi.stubGlobal('matchMedia', (query: string) => ({ matches: true, media: query, addEventListener: () => undefined, removeEventListener: () => undefined }));
}

const later = (min: number) => new Date(Date.parse(T0) + min * 60_000).toISOString();

async function openList(active: AlarmDto[], onCall: (c: Call) => Response | null = () => null) {
  asPhone();
  const ctx = setup({ role: 'technician' });
  installHttpWiring(ctx.router, ctx.pinia);
  const stub = stubFetch((c) => {
    const own = onCall(c);
    if (own) return own;
    if (c.url.startsWith('/api/v1/alarms?') && c.url.includes('active=true')) return json(200, { items: active, page: 1, pageSize: 200, total: active.length });
    return problem(404, { type: 'x', title: 'Not found' });
  });
  await ctx.router.push('/alarms');
  const wrapper = mountView(AlarmsView, ctx);
  await flushPromises();
  return { wrapper, stub, ctx };
}

describe('alarm list on a phone', () => {
  it('lists new alarms first, then acknowledged ones still active, then cleared-but-unacknowledged, and leaves out cleared ones', async () => {
    const { wrapper } = await openList([
      makeAlarm({ id: 11, state: 'rtn-unacknowledged', priority: 'critical', conditionActive: false }),
      makeAlarm({ id: 12, state: 'acknowledged', priority: 'critical' }),
      makeAlarm({ id: 13, state: 'unacknowledged', priority: 'low' }),
      makeAlarm({ id: 14, state: 'unacknowledged', priority: 'critical' }),
      makeAlarm({ id: 15, state: 'normal', priority: 'critical' }),
    ]);
    const ids = wrapper.findAll('[data-test="alarm-row"]').map((r) => r.attributes('data-alarm-id'));
    // Within the new group the more urgent priority comes first.
    expect(ids).toEqual(['14', '13', '12', '11']);
  });

  it('shows each priority as a word and as a shape, not by colour alone', async () => {
    const { wrapper } = await openList([makeAlarm({ id: 21, priority: 'critical' }), makeAlarm({ id: 22, priority: 'low', raisedAt: later(-5) })]);
    const rows = wrapper.findAll('[data-test="alarm-row"]');
    expect(rows.map((r) => r.find('[data-test="alarm-priority-text"]').text())).toEqual(['Critical', 'Low']);
    const shapes = rows.map((r) => r.find('[data-test="alarm-priority-icon"] path').attributes('d'));
    expect(shapes[0]).toBeTruthy();
    expect(shapes[0]).not.toBe(shapes[1]);
    expect(rows[0]?.find('[data-test="alarm-rule"]').text()).toBe('Box air too warm');
  });

  it('acknowledges with one tap: posts to the ack endpoint with the CSRF token and updates the row', async () => {
    const acked = makeAlarm({ id: 31, state: 'acknowledged', acknowledgedAt: later(2), acknowledgedBy: { id: 7, name: 'Test technician' }, updatedAt: later(2) });
    const { wrapper, stub } = await openList([makeAlarm({ id: 31 }), makeAlarm({ id: 32, raisedAt: later(-10) })], (c) =>
      c.method === 'POST' && c.url === '/api/v1/alarms/31/ack' ? json(200, acked) : null,
    );
    const row = () => wrapper.find('[data-alarm-id="31"]');
    expect(row().attributes('data-state')).toBe('unacknowledged');

    await row().find('[data-test="alarm-ack"]').trigger('click');
    await flushPromises();

    const posts = stub.calls.filter((c) => c.method === 'POST');
    expect(posts).toHaveLength(1);
    expect(posts[0]?.url).toBe('/api/v1/alarms/31/ack');
    expect(posts[0]?.body).toEqual({});
    expect(posts[0]?.headers['x-csrf-token']).toBe('csrf-test-token');
    expect(row().attributes('data-state')).toBe('acknowledged');
    expect(row().find('[data-test="alarm-ack"]').exists()).toBe(false);
    expect(row().text()).toContain('Acknowledged by Test technician');
    // Still active, so it moves below the one nobody acknowledged yet.
    expect(wrapper.findAll('[data-test="alarm-row"]').map((r) => r.attributes('data-alarm-id'))).toEqual(['32', '31']);
  });
});

describe('alarm history at desktop width', () => {
  it('loads the paginated history next to the attention list', async () => {
    const ctx = setup({ role: 'technician' });
    installHttpWiring(ctx.router, ctx.pinia);
    const stub = stubFetch((c) => {
      if (c.url.includes('active=true')) return json(200, { items: [], page: 1, pageSize: 200, total: 0 });
      if (c.url.startsWith('/api/v1/alarms?')) return json(200, { items: [makeAlarm({ id: 51, state: 'normal' })], page: 1, pageSize: 25, total: 1 });
      return problem(404, { type: 'x', title: 'Not found' });
    });
    await ctx.router.push('/alarms');
    const wrapper = mountView(AlarmsView, ctx);
    await flushPromises();
    const history = stub.calls.find((c) => c.url.startsWith('/api/v1/alarms?') && !c.url.includes('active='));
    expect(history?.url).toContain('page=1');
    expect(history?.url).toContain('pageSize=25');
    expect(wrapper.find('[data-test="alarm-history"]').text()).toContain('Box air too warm');
    expect(wrapper.find('[data-test="alarms-none"]').exists()).toBe(true);
  });

  it('sends filters as the comma lists the API expects', () => {
    const q = alarmListQuery({ state: ['unacknowledged', 'acknowledged'], priority: ['critical'], rule: [], siteId: 2, boxId: null, active: false });
    expect(q).toMatchObject({ state: 'unacknowledged,acknowledged', priority: 'critical', rule: undefined, siteId: 2, boxId: undefined, active: 'false' });
  });
});

describe('active-alarm badge on the box card', () => {
  it('shows the most urgent priority and the count of alarms needing attention, and nothing for a quiet box', async () => {
    const ctx = setup({ role: 'manager' });
    const stub = stubFetch(() => problem(404, { type: 'x', title: 'Not found' }));
    const alarms = useAlarmsStore(ctx.pinia);
    alarms.upsert(makeAlarm({ id: 61, boxId: 5, priority: 'medium' }));
    alarms.upsert(makeAlarm({ id: 62, boxId: 5, priority: 'critical', state: 'acknowledged' }));
    alarms.upsert(makeAlarm({ id: 63, boxId: 6, priority: 'critical', state: 'normal' }));
    const card = (boxId: number) =>
      mount(defineComponent({ render: () => h(BoxCard, { box: makeStatus({ boxId }), now: Date.now() }) }), { global: { plugins: [ctx.pinia, ctx.router] } });

    const busy = card(5);
    const quiet = card(6);
    await flushPromises();

    expect(busy.find('[data-test="alarm-priority-text"]').text()).toBe('Critical');
    expect(busy.find('[data-test="alarm-count"]').text()).toBe('· 2 alarms');
    expect(quiet.find('[data-test="alarm-priority"]').exists()).toBe(false);
    // No live socket is open in this test, so the badge fetched nothing by itself.
    expect(stub.calls).toHaveLength(0);
  });
});

describe('live alarm events', () => {
  it('adds and updates alarms from the live socket and ignores an older copy that arrives late', () => {
    setup({ role: 'manager' });
    const alarms = useAlarmsStore();
    let handler: ((ev: LiveEvent) => void) | null = null;
    alarms.connectLive({
      subscribe: (h) => {
        handler = h;
        return () => {
          handler = null;
        };
      },
    });
    const emit = (ev: LiveEvent) => (handler as ((ev: LiveEvent) => void) | null)?.(ev);

    emit({ type: 'alarm', alarm: makeAlarm({ id: 41, boxId: 5 }) });
    expect(alarms.byBox[5]?.map((a) => a.id)).toEqual([41]);

    emit({ type: 'alarm', alarm: makeAlarm({ id: 41, state: 'normal', conditionActive: false, clearedAt: later(30), updatedAt: later(30) }) });
    expect(alarms.byId[41]?.state).toBe('normal');
    expect(alarms.byBox[5]).toBeUndefined();

    emit({ type: 'alarm', alarm: makeAlarm({ id: 41, state: 'unacknowledged', updatedAt: later(1) }) });
    expect(alarms.byId[41]?.state).toBe('normal');

    alarms.disconnectLive();
    emit({ type: 'alarm', alarm: makeAlarm({ id: 42 }) });
    expect(alarms.byId[42]).toBeUndefined();
  });

  it('has a frame guard that accepts a well-formed alarm frame and rejects one with an unknown state', () => {
    expect(LiveAlarmFrame.safeParse({ type: 'alarm', alarm: makeAlarm() }).success).toBe(true);
    expect(LiveAlarmFrame.safeParse({ type: 'alarm', alarm: { ...makeAlarm(), state: 'panic' } }).success).toBe(false);
  });
});

async function openDetail(role: Role, path: string, ackLink: (c: Call) => Response = () => json(200, makeAlarm({ id: 9 }))) {
  const ctx = setup({ role });
  installHttpWiring(ctx.router, ctx.pinia);
  const stub = stubFetch((c) => {
    if (c.url === '/api/v1/alarms/ack-link' && c.method === 'POST') return ackLink(c);
    if (c.url === '/api/v1/alarms/9') return json(200, makeDetail({ id: 9 }));
    if (c.url === '/api/v1/sites/2') return json(200, { id: 2, timeZone: 'America/Chicago' });
    if (c.url.startsWith('/api/v1/boxes/5/readings')) return json(200, { boxId: 5, resolution: 'raw', from: '', to: '', points: [] });
    return problem(404, { type: 'x', title: 'Not found' });
  });
  await ctx.router.push(path);
  const wrapper = mountView(AlarmDetailView, ctx, { id: '9' });
  await flushPromises();
  return { wrapper, stub, ctx };
}

describe('acknowledging from the e-mailed link', () => {
  const TOKEN = 'tok_AbCdEfGhIjKlMnOpQrStUv';

  it('sends the token once, shows the result and takes the token out of the address', async () => {
    const acked = makeAlarm({ id: 9, state: 'acknowledged', acknowledgedAt: later(3), acknowledgedBy: { id: 3, name: 'Test manager' }, updatedAt: later(3) });
    const { wrapper, stub, ctx } = await openDetail('manager', `/alarms/9?ack=${TOKEN}&from=mail`, () => json(200, acked));

    const linkCalls = stub.calls.filter((c) => c.url === '/api/v1/alarms/ack-link');
    expect(linkCalls).toHaveLength(1);
    expect(linkCalls[0]?.body).toEqual({ token: TOKEN });
    expect(ctx.router.currentRoute.value.query.ack).toBeUndefined();
    expect(ctx.router.currentRoute.value.query.from).toBe('mail');
    expect(ctx.router.currentRoute.value.fullPath).not.toContain(TOKEN);
    expect(wrapper.find('[data-test="ack-link-result"]').text()).toBe('Acknowledged by Test manager.');

    // Opening the same link again in this tab does not send it a second time.
    wrapper.unmount();
    await ctx.router.push(`/alarms/9?ack=${TOKEN}`);
    mountView(AlarmDetailView, ctx, { id: '9' });
    await flushPromises();
    expect(stub.calls.filter((c) => c.url === '/api/v1/alarms/ack-link')).toHaveLength(1);
  });

  it('says so when the link was already used (410)', async () => {
    const { wrapper, ctx } = await openDetail('technician', '/alarms/9?ack=tok_usedUsedUsedUsedUsed01', () =>
      problem(410, { type: 'https://rimehold.example/problems/ack-link-used', title: 'Link already used', detail: 'This acknowledgement link has been used; open the alarm to see who acknowledged it.' }),
    );
    expect(wrapper.find('[data-test="ack-link-result"]').text()).toBe('This acknowledgement link has been used; open the alarm to see who acknowledged it.');
    expect(ctx.router.currentRoute.value.query.ack).toBeUndefined();
    expect(wrapper.find('[data-test="alarm-rule"]').text()).toBe('Box air too warm');
  });
});

describe('alarm actions by role', () => {
  it('lets a manager acknowledge but shows no shelve or maintenance action', async () => {
    const { wrapper } = await openDetail('manager', '/alarms/9');
    expect(wrapper.find('[data-test="detail-ack"]').exists()).toBe(true);
    expect(wrapper.find('[data-test="shelve-form"]').exists()).toBe(false);
    expect(wrapper.find('[data-test="maintenance-form"]').exists()).toBe(false);
  });

  it('acknowledges from the alarm page with the note the person typed', async () => {
    const { wrapper, stub } = await openDetail('manager', '/alarms/9');
    stub.fn.mockImplementation(async (input: RequestInfo | URL, init?: RequestInit) => {
      const url = String(input);
      if (url === '/api/v1/alarms/9/ack') return json(200, makeAlarm({ id: 9, state: 'acknowledged', updatedAt: later(4) }));
      if (url === '/api/v1/alarms/9') return json(200, makeDetail({ id: 9, state: 'acknowledged', updatedAt: later(4) }));
      return init?.method === 'POST' ? problem(500, { title: 'unexpected' }) : problem(404, { type: 'x', title: 'Not found' });
    });
    await wrapper.find('[data-test="ack-note"] textarea').setValue('Door was propped open; closed it.');
    await wrapper.find('[data-test="detail-ack"]').trigger('click');
    await flushPromises();
    const ack = stub.fn.mock.calls.find(([u]) => String(u) === '/api/v1/alarms/9/ack');
    expect(ack?.[1]?.method).toBe('POST');
    expect(JSON.parse(String(ack?.[1]?.body))).toEqual({ note: 'Door was propped open; closed it.' });
    expect(wrapper.find('[data-test="alarm-state"]').text()).toContain('Acknowledged, still active');
    expect(wrapper.find('[data-test="detail-ack"]').exists()).toBe(false);
  });

  it('shows a technician the shelve form next to acknowledge', async () => {
    const { wrapper } = await openDetail('technician', '/alarms/9');
    expect(wrapper.find('[data-test="detail-ack"]').exists()).toBe(true);
    expect(wrapper.find('[data-test="shelve-form"]').exists()).toBe(true);
  });

  it('lets a technician shelve with minutes and a reason, and refuses a reason that is too short without posting', async () => {
    const { wrapper } = await openDetail('technician', '/alarms/9');
    const fetchFn = vi.mocked(globalThis.fetch);
    const posts = () => fetchFn.mock.calls.filter(([u, init]) => String(u) === '/api/v1/alarms/9/shelve' && init?.method === 'POST');

    await wrapper.find('[data-test="shelve-reason"] input').setValue('ok');
    await wrapper.find('[data-test="shelve"]').trigger('click');
    await flushPromises();
    expect(posts()).toHaveLength(0);
    expect(wrapper.find('[data-test="shelve-form"]').text()).toContain('reason of at least 3 characters');

    await wrapper.find('[data-test="shelve-reason"] input').setValue('Compressor swap tonight');
    await wrapper.find('[data-test="shelve"]').trigger('click');
    await flushPromises();
    expect(posts()).toHaveLength(1);
    expect(JSON.parse(String(posts()[0]?.[1]?.body))).toEqual({ minutes: 60, reason: 'Compressor swap tonight' });
  });

  it('shows times in the site zone with the zone named', async () => {
    const { wrapper } = await openDetail('technician', '/alarms/9');
    // 03:00 UTC is 21:00 the day before in America/Chicago (UTC−6 in December; IANA tz database).
    const raised = wrapper.find('[data-test="alarm-raised"]').text();
    expect(raised).toMatch(/Dec 2, 2026|2 Dec 2026/);
    expect(raised).toMatch(/09:00\s?PM|21:00/);
    expect(raised).toMatch(/CST/);
    expect(wrapper.text()).toContain("site's zone (America/Chicago)");
  });
});
