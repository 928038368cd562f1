/** The trends page: picks the site and week from the link in the weekly mail, shows tiles, findings and the CSV link. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { defineComponent, h } from 'vue';
import { flushPromises } from '@vue/test-utils';
import { installHttpWiring } from '@/api/wiring';
import type { SiteTrendDto, TrendSummaryDto } from '@shared/schemas/trends';
import type { FleetBoxStatus } from '@shared/schemas/live';
import { json, mountView, setup, stubFetch } from './helpers';

// The chart itself is ECharts' business: a stub shows each option's series names and line types.
vi.mock('vue-echarts', () => ({
  default: defineComponent({
    props: { option: { type: Object, required: true } },
    setup(props) {
      return () => {
        const series = (props.option as { series: Array<{ name: string; lineStyle?: { type?: string } }> }).series;
        return h('div', { 'data-test': 'chart' }, series.map((s) => `${s.name}${s.lineStyle?.type === 'dashed' ? ' (dashed)' : ''}`).join('|'));
      };
    },
  }),
}));

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const summary = (x: Partial<TrendSummaryDto> = {}): TrendSummaryDto => ({
  coveredMin: 10_080,
  inRangeMin: 9_660,
  timeInRangePercent: 95.8,
  minutesAboveLimit: 60,
  excursionCount: 1,
  longestExcursionMin: 60,
  compressorDutyPercent: 66.7,
  compressorMin: 6_720,
  doorOpenMin: 7,
  defrostCount: 28,
  alarmCount: 1,
  alarmsByRule: { 'box-air-high': 1 },
  acknowledgedCount: 1,
  meanTimeToAckMin: 25,
  ...x,
});
const days = ['2026-11-16', '2026-11-17', '2026-11-18', '2026-11-19', '2026-11-20', '2026-11-21', '2026-11-22'];
const week = { week: '2026-W47', from: '2026-11-15T23:00:00.000Z', to: '2026-11-22T23:00:00.000Z', hours: 168, days, timeZone: 'Europe/Berlin' };
const day = (d: string) => ({ day: d, coveredMin: 1440, compressorDutyPercent: 66.7, defrostCount: 4, defrostMeanMin: 20, defrostMin: 80, doorOpenMin: 1, boxAirMeanC: 2.2, boxAirMinC: 1.5, boxAirMaxC: 8.5, timeInRangePercent: 95.8, minutesAboveLimit: 60 });
const SITE: SiteTrendDto = {
  siteId: 7,
  siteName: 'North store',
  week,
  summary: summary(),
  previousSummary: summary({ timeInRangePercent: 100, compressorDutyPercent: 33.3 }),
  boxes: [
    {
      boxId: 11, boxName: 'Prep cooler', siteId: 7, siteName: 'North store', kind: 'cooler', setpointC: 2, highLimitC: 5, lowLimitC: 0, superheatTargetK: 3.3,
      superheatBandK: { lowK: 1.8, highK: 8.3 }, week, previousWeek: { ...week, week: '2026-W46' }, hours: [], previousHours: [], days: days.map(day), previousDays: days.map(day),
      superheatBins: [], previousSuperheatBins: [], summary: summary(), previousSummary: summary(), findings: [], notes: [],
    },
  ],
  findings: [{ id: 'duty-rising', boxId: 11, boxName: 'Prep cooler', title: 'Compressor duty rising', text: 'The compressor ran 66.7 % of the time this week against 33.3 %.', figures: { dutyPercent: 66.7, previousDutyPercent: 33.3 } }],
};
const FLEET = [{ boxId: 11, boxName: 'Prep cooler', siteId: 7, siteName: 'North store', siteTimeZone: 'Europe/Berlin', customerName: 'Example Foods', kind: 'cooler' } as unknown as FleetBoxStatus];

describe('TrendsView', () => {
  it('opens the site and week of the mail link and shows the summary, findings and the CSV link', async () => {
    const ctx = setup({ role: 'manager' });
    installHttpWiring(ctx.router, ctx.pinia);
    const { calls } = stubFetch((c) => (c.url.includes('/fleet/status') ? json(200, FLEET) : json(200, SITE)));
    await ctx.router.push('/records/trends?siteId=7&week=2026-W47');
    const { default: TrendsView } = await import('@/views/records/TrendsView.vue');
    const wrapper = mountView(TrendsView, ctx);
    await flushPromises();
    await flushPromises();
    expect(calls.some((c) => c.url.includes('/api/v1/trends/sites/7') && c.url.includes('week=2026-W47'))).toBe(true);
    const text = wrapper.text();
    expect(text).toContain('95.8 %');
    expect(text).toContain('-4.2 pts vs week before'); // 95.8 − 100.0
    expect(text).toContain('Prep cooler: Compressor duty rising.');
    expect(text).toContain('dutyPercent 66.7');
    expect(wrapper.find('a[download]').attributes('href')).toBe('/api/v1/trends/sites/7/export.csv?week=2026-W47');
    expect(wrapper.findAll('[data-test="chart"]').map((c) => c.text())).toEqual(['Prep cooler', 'Prep cooler']);
    expect(wrapper.find('[data-test="previous-partial"]').exists()).toBe(false);
  });

  it('says when the week before has far fewer readings than the week shown', async () => {
    const ctx = setup({ role: 'manager' });
    installHttpWiring(ctx.router, ctx.pinia);
    // the site's boxes: 10,080 min this week against 3,000 min (50 h) the week before, summed over boxes
    const partial = { ...SITE, previousSummary: summary({ coveredMin: 3_000, inRangeMin: 3_000, timeInRangePercent: 100 }) };
    stubFetch((c) => (c.url.includes('/fleet/status') ? json(200, FLEET) : c.url.includes('/reports/weekly') ? json(200, { items: [], page: 1, pageSize: 50, total: 0 }) : json(200, partial)));
    await ctx.router.push('/records/trends?siteId=7&week=2026-W47');
    const { default: TrendsView } = await import('@/views/records/TrendsView.vue');
    const wrapper = mountView(TrendsView, ctx);
    await flushPromises();
    await flushPromises();
    expect(wrapper.find('[data-test="previous-partial"]').text()).toBe('The week before has readings for 50 box-hours against 168 box-hours this week: its figures cover less time.');
  });

  it('shows a box with the week before as a dashed series on every chart', async () => {
    const ctx = setup({ role: 'technician' });
    installHttpWiring(ctx.router, ctx.pinia);
    const box = SITE.boxes[0];
    const { calls } = stubFetch((c) => (c.url.includes('/fleet/status') ? json(200, FLEET) : c.url.includes('/trends/boxes/11') ? json(200, box) : json(200, SITE)));
    await ctx.router.push('/records/trends?siteId=7&boxId=11&week=2026-W47');
    const { default: TrendsView } = await import('@/views/records/TrendsView.vue');
    const wrapper = mountView(TrendsView, ctx);
    await flushPromises();
    await flushPromises();
    expect(calls.some((c) => c.url.includes('/api/v1/trends/boxes/11?week=2026-W47'))).toBe(true);
    const charts = wrapper.findAll('[data-test="chart"]').map((c) => c.text());
    // air, superheat, valve, duty, defrost count, defrost length, door
    expect(charts).toHaveLength(7);
    expect(charts.every((c) => /Week before[^|]*\(dashed\)/.test(c))).toBe(true);
    expect(wrapper.find('a[download]').attributes('href')).toBe('/api/v1/trends/boxes/11/export.csv?week=2026-W47');
  });
  it('lists the site’s sent weekly reports and lets an admin send the shown week now', async () => {
    const ctx = setup({ role: 'admin' });
    installHttpWiring(ctx.router, ctx.pinia);
    const row = { id: 5, recipientUserId: 3, recipientEmail: 'manager@example.com', siteId: 7, siteName: 'North store', isoWeek: '2026-W47', status: 'sent', attempts: 1, error: null, createdAt: '2026-11-23T06:00:01.000Z', sentAt: '2026-11-23T06:00:02.000Z' };
    let sent = false;
    const { calls } = stubFetch((c) => {
      if (c.url.includes('/fleet/status')) return json(200, FLEET);
      if (c.url.includes('/reports/weekly/send')) {
        sent = true;
        return json(200, { results: [{ siteId: 7, isoWeek: '2026-W47', sent: 2, failed: 0, skipped: 1 }] });
      }
      if (c.url.includes('/reports/weekly')) return json(200, { items: sent ? [row] : [], page: 1, pageSize: 50, total: sent ? 1 : 0 });
      return json(200, SITE);
    });
    await ctx.router.push('/records/trends?siteId=7&week=2026-W47');
    const { default: TrendsView } = await import('@/views/records/TrendsView.vue');
    const wrapper = mountView(TrendsView, ctx);
    await flushPromises();
    await flushPromises();
    expect(calls.some((c) => c.method === 'GET' && c.url.includes('/api/v1/reports/weekly?siteId=7'))).toBe(true);
    expect(wrapper.find('[data-test="weekly-reports"]').text()).toContain('No report of this site has been sent yet.');
    await wrapper.find('[data-test="send-report"]').trigger('click');
    await flushPromises();
    await flushPromises();
    const post = calls.find((c) => c.method === 'POST' && c.url.includes('/api/v1/reports/weekly/send'));
    expect(post?.body).toEqual({ siteId: 7, week: '2026-W47' });
    expect(wrapper.find('[data-test="send-result"]').text()).toBe('Report for 2026-W47: sent to 2 recipient(s), 1 already had it.');
    const list = wrapper.find('[data-test="weekly-reports"]').text();
    expect(list).toContain('manager@example.com');
    expect(list).toContain('sent');
  });

  it('shows no send button to a manager', async () => {
    const ctx = setup({ role: 'manager' });
    installHttpWiring(ctx.router, ctx.pinia);
    stubFetch((c) => (c.url.includes('/fleet/status') ? json(200, FLEET) : c.url.includes('/reports/weekly') ? json(200, { items: [], page: 1, pageSize: 50, total: 0 }) : json(200, SITE)));
    await ctx.router.push('/records/trends?siteId=7&week=2026-W47');
    const { default: TrendsView } = await import('@/views/records/TrendsView.vue');
    const wrapper = mountView(TrendsView, ctx);
    await flushPromises();
    await flushPromises();
    expect(wrapper.find('[data-test="send-report"]').exists()).toBe(false);
    expect(wrapper.find('[data-test="weekly-reports"]').text()).toContain('No report of this site has been sent to you yet.');
  });
});
