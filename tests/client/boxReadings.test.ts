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
import type { FleetBoxStatus, ReadingFlag } from '@shared/schemas/live';
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

describe('box page reading quality', () => {
  // Flag texts as server/telemetry/quality.ts and convert.ts write them (wiring: the page shows the stored words).
  const open: ReadingFlag = { code: 'sensor-open', sensor: 'suctionLineC', affects: ['suctionLineC', 'superheatK'], message: 'Suction-line sensor open (reads −60.0 °C) — no superheat' };
  const boxAir: ReadingFlag = { code: 'sensor-out-of-range', sensor: 'boxAirC', affects: ['boxAirC'], message: 'Box-air sensor out of range (reads −55.0 °C, plausible −50.0 °C to 60.0 °C)' };
  const supercritical: ReadingFlag = { code: 'supercritical', affects: ['subcoolingK'], message: 'High side supercritical: no saturation and no subcooling (R-744 is supercritical)' };
  const fieldOf = (w: Awaited<ReturnType<typeof openDetail>>, field: string) => w.find(`.values [data-field="${field}"]`);

  it('shows a failed sensor\'s reason beside the value it blanks, and a reason without a value row below the values', async () => {
    const w = await openDetail(makeStatus({ latest: makeReading({ suctionLineC: -60, superheatK: null, flags: [open, boxAir] }) }));
    expect(testText(w, 'detail-superheat')).toBe('—');
    expect(fieldOf(w, 'superheatK').find('[data-test="reading-quality"]').text()).toBe(open.message);
    // Shown once: not again beside the suction line, nor in the list below.
    expect(fieldOf(w, 'suctionLineC').find('[data-test="reading-quality"]').exists()).toBe(false);
    const below = w.findAll('.values ~ [data-test="reading-quality"]');
    expect(below.map((x) => x.text())).toEqual([boxAir.message]);
  });

  it('shows a two-thermistor blend\'s glide warning beside its superheat, as a note rather than a fault', async () => {
    const glide: ReadingFlag = { code: 'glide', affects: ['superheatK', 'saturatedSuctionC'], message: 'R-448A glides about 6.3 K here: superheat is taken against the dew point (coil inlet + glide), not outlet − inlet (12.0 K)' };
    const w = await openDetail(makeStatus({ refrigerant: 'R-448A', latest: makeReading({ superheatK: 5.7, flags: [glide] }) }), makeBox({ refrigerant: 'R-448A' }));
    const item = fieldOf(w, 'superheatK').find('[data-test="reading-quality"] li');
    expect(item.text()).toBe(glide.message);
    expect(item.classes()).toContain('note');
    expect(testText(w, 'detail-superheat')).toBe('5.7 K');
  });

  it('names an R-744 high side above the critical pressure: gas-cooler outlet, and no subcooling with the reason', async () => {
    const latest = makeReading({ liquidKPaG: 9000, liquidLineC: 33, subcoolingK: null, flags: [supercritical] });
    const w = await openDetail(makeStatus({ refrigerant: 'R-744', latest }), makeBox({ refrigerant: 'R-744' }));
    expect(fieldOf(w, 'liquidLineC').find('dt').text()).toBe('Gas-cooler outlet');
    expect(testText(w, 'detail-liquid-line')).toBe('33.0 °C');
    expect(testText(w, 'detail-subcooling')).toBe('none (supercritical)');
    expect(fieldOf(w, 'subcoolingK').find('[data-test="reading-quality"]').text()).toBe(supercritical.message);
  });

  it('shows an R-744 gas cooler its approach to the air entering it, and says when no air-in reading comes', async () => {
    const latest = makeReading({ liquidKPaG: 9000, liquidLineC: 33, subcoolingK: null, condenserAirC: 30, approachK: 3, flags: [supercritical] });
    const w = await openDetail(makeStatus({ refrigerant: 'R-744', latest }), makeBox({ refrigerant: 'R-744' }));
    expect(fieldOf(w, 'condenserAirC').find('dt').text()).toBe('Air into gas cooler');
    expect(testText(w, 'detail-condenser-air')).toBe('30.0 °C');
    expect(testText(w, 'detail-approach')).toBe('3.0 K');
    const without = await openDetail(makeStatus({ refrigerant: 'R-744', latest: makeReading({ liquidKPaG: 9000, liquidLineC: 33, subcoolingK: null, flags: [supercritical] }) }), makeBox({ refrigerant: 'R-744' }));
    expect(testText(without, 'detail-approach')).toBe('no air-in reading');
  });

  it('keeps a blank subcooling row with its reason when the liquid-line sensor failed', async () => {
    const shorted: ReadingFlag = { code: 'sensor-shorted', sensor: 'liquidLineC', affects: ['liquidLineC', 'subcoolingK'], message: 'Liquid-line sensor shorted (reads 130.0 °C) — no subcooling' };
    const w = await openDetail(makeStatus({ latest: makeReading({ liquidKPaG: 1500, liquidLineC: 130, subcoolingK: null, flags: [shorted] }) }));
    expect(fieldOf(w, 'liquidLineC').find('dt').text()).toBe('Liquid line');
    expect(testText(w, 'detail-subcooling')).toBe('—');
    expect(fieldOf(w, 'subcoolingK').find('[data-test="reading-quality"]').text()).toBe(shorted.message);
  });
});
