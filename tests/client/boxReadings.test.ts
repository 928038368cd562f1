/**
 * How the fleet card and the box page present the latest reading: superheat and valve opening muted
 * in the off cycle, and a box with no reading, an offline controller or a thermostatic valve.
 */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import { defineComponent, h } from 'vue';
import BoxCard from '@/components/BoxCard.vue';
import BoxDetailView from '@/views/boxes/BoxDetailView.vue';
import { useFleetStore } from '@/stores/fleet';
import { installHttpWiring } from '@/api/wiring';
import type { FleetBoxStatus } from '@shared/schemas/live';
import type { BoxDto } from '@shared/schemas/boxes';
import { json, mountView, problem, setup, stubFetch, testText } from './helpers';
import { makeBox, makeReading, makeStatus } from './boxFixtures';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

function mountCard(box: FleetBoxStatus, nowMs = Date.now()) {
  const ctx = setup({ role: 'technician', unitSystem: 'metric-kpa' });
  const Host = defineComponent({ render: () => h(BoxCard, { box, now: nowMs }) });
  return mount(Host, { global: { plugins: [ctx.pinia, ctx.router] } });
}

async function openDetail(status: FleetBoxStatus | null, box: BoxDto = makeBox()) {
  const ctx = setup({ role: 'technician', unitSystem: 'metric-kpa' });
  installHttpWiring(ctx.router, ctx.pinia);
  if (status) useFleetStore(ctx.pinia).replaceAll([status]);
  const latest = status?.latest ?? null;
  stubFetch((c) => {
    if (c.url === '/api/v1/boxes/5') return json(200, box);
    if (c.url === '/api/v1/boxes/5/latest') return latest ? json(200, latest) : problem(404, { type: 'x', title: 'Not found' });
    if (c.url.startsWith('/api/v1/boxes/5/readings')) return json(200, { boxId: 5, resolution: 'raw', from: '', to: '', points: [] });
    if (c.url === '/api/v1/boxes/5/settings/changes') return json(200, []);
    return problem(404, { type: 'x', title: 'Not found' });
  });
  await ctx.router.push('/boxes/5');
  const wrapper = mountView(BoxDetailView, ctx, { id: '5' });
  await flushPromises();
  return wrapper;
}

describe('fleet card superheat', () => {
  it('shows superheat as a live value while the compressor runs', () => {
    const w = mountCard(makeStatus({ latest: makeReading({ compressorOn: true, superheatK: 5 }) }));
    const sh = w.find('[data-test="box-superheat"]');
    expect(sh.find('[data-cycle="live"]').text()).toBe('5.0 K');
    expect(sh.text()).not.toContain('off cycle');
  });

  it('mutes superheat with an "off cycle" note when the compressor is off, keeping the figure small and in the tooltip', () => {
    const w = mountCard(makeStatus({ latest: makeReading({ compressorOn: false, superheatK: 14.2 }) }));
    const sh = w.find('[data-test="box-superheat"]');
    const off = sh.find('[data-cycle="off"]');
    expect(off.exists()).toBe(true);
    expect(sh.find('[data-cycle="live"]').exists()).toBe(false);
    expect(off.text()).toContain('off cycle');
    expect(off.find('small').text()).toBe('(14.2 K)');
    expect(off.attributes('title')).toContain('Superheat 14.2 K');
    expect(off.attributes('title')).toContain('compressor off');
  });
});

describe('fleet card edge cases', () => {
  it('says "No reading yet" for a box that never reported, with no compressor state or superheat', () => {
    const w = mountCard(makeStatus({ latest: null, lastSeenAt: null }));
    expect(testText(w, 'box-temp')).toBe('—');
    expect(testText(w, 'box-no-reading')).toBe('No reading yet');
    expect(w.find('[data-test="box-superheat"]').exists()).toBe(false);
    expect(w.text()).not.toContain('Comp. off');
    expect(testText(w, 'box-ago')).toBe('Never reported');
  });

  it('marks an offline controller and a stale last reading', () => {
    const old = new Date(Date.now() - 20 * 60_000).toISOString();
    const w = mountCard(makeStatus({ online: false, latest: makeReading({ ts: old }) }));
    expect(w.text()).toContain('Offline');
    expect(testText(w, 'box-ago')).toBe('Last reading 20 min ago · stale');
    expect(w.find('[data-test="box-condition"]').text()).toBe('No signal');
  });

  it('says "No controller" for a box with none provisioned', () => {
    const w = mountCard(makeStatus({ controllerSerial: null, online: false, latest: null }));
    expect(w.text()).toContain('No controller');
    expect(testText(w, 'box-no-reading')).toBe('No reading yet');
  });
});

describe('box page readings', () => {
  it('shows superheat and valve opening live while the compressor runs', async () => {
    const w = await openDetail(makeStatus({ latest: makeReading({ compressorOn: true, superheatK: 5, valvePercent: 35 }) }));
    expect(w.find('[data-test="detail-superheat"] [data-cycle="live"]').text()).toBe('5.0 K');
    expect(w.find('[data-test="detail-valve"] [data-cycle="live"]').text()).toBe('35 %');
    expect(w.find('[data-test="detail-off-cycle-note"]').exists()).toBe(false);
  });

  it('mutes superheat and valve opening in the off cycle and keeps their figures', async () => {
    const w = await openDetail(makeStatus({ latest: makeReading({ compressorOn: false, superheatK: 12, valvePercent: 0 }) }));
    const sh = w.find('[data-test="detail-superheat"] [data-cycle="off"]');
    expect(sh.text()).toContain('off cycle');
    expect(sh.find('small').text()).toBe('(12.0 K)');
    const valve = w.find('[data-test="detail-valve"] [data-cycle="off"]');
    expect(valve.find('small').text()).toBe('(0 %)');
    expect(testText(w, 'detail-off-cycle-note')).toContain('superheat and valve opening');
    // Other figures stay as they are in the off cycle.
    expect(w.text()).toContain('Compressor off');
  });

  it('says the valve position is not reported on a thermostatic-valve box', async () => {
    const w = await openDetail(
      makeStatus({ valveType: 'txv', latest: makeReading({ compressorOn: false, valvePercent: null, valveSteps: null }) }),
      makeBox({ valveType: 'txv' }),
    );
    expect(testText(w, 'detail-valve')).toBe('TXV, not reported');
    expect(w.find('[data-test="detail-valve"] [data-cycle="off"]').exists()).toBe(false);
    expect(testText(w, 'detail-off-cycle-note')).toContain('superheat is a figure');
  });

  it('says "No reading from this box yet" and "never reported" instead of made-up states', async () => {
    const w = await openDetail(makeStatus({ latest: null, lastSeenAt: null }));
    expect(testText(w, 'box-temp')).toBe('—');
    expect(testText(w, 'detail-no-reading')).toBe('No reading from this box yet.');
    expect(w.text()).not.toContain('Compressor off');
    expect(w.text()).not.toContain('Door closed');
    expect(w.find('[data-test="detail-superheat"]').exists()).toBe(false);
    expect(w.text()).toContain('SIM-0005 · online · never reported');
  });

  it('shows an offline controller as offline', async () => {
    const w = await openDetail(makeStatus({ online: false }), makeBox({ controller: { ...makeBox().controller!, online: false } }));
    expect(w.text()).toContain('SIM-0005 · offline · last reading');
  });

  it('says "No controller" for a box with none', async () => {
    const w = await openDetail(makeStatus({ controllerSerial: null, online: false, latest: null }), makeBox({ controller: null }));
    expect(w.text()).toContain('No controller · never reported');
  });
});
