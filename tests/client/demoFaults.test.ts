/** Demo fault injection on the box page: who sees the panel, and the exact POST /api/v1/demo/faults bodies. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import { FAULT_NAMES, DemoFaultBody } from '@shared/schemas/demo';
import BoxDetailView from '@/views/boxes/BoxDetailView.vue';
import { useFleetStore } from '@/stores/fleet';
import { DEMO_FAULTS_STORAGE_KEY } from '@/stores/demoFaults';
import { FAULT_WORDS } from '@/lib/demoFaults';
import type { Role } from '@shared/domain';
import { installHttpWiring } from '@/api/wiring';
import { json, mountView, problem, setup, stubFetch, type Call } from './helpers';
import { makeBox, makeStatus } from './boxFixtures';

afterEach(() => {
  vi.unstubAllGlobals();
  sessionStorage.clear();
  document.body.innerHTML = '';
});

type FaultAnswer = (call: Call) => Response;
const accept: FaultAnswer = (c) => {
  const b = c.body as { fault: string; on: boolean };
  return json(202, { serial: 'SIM-0005', fault: b.fault, on: b.on });
};

async function openBox(opts: { role?: Role; demoMode?: boolean; faults?: FaultAnswer; hasController?: boolean } = {}) {
  const ctx = setup({ role: opts.role ?? 'admin', features: { demoMode: opts.demoMode ?? true } });
  installHttpWiring(ctx.router, ctx.pinia);
  const withController = opts.hasController ?? true;
  const box = withController ? makeBox() : makeBox({ controller: null });
  const status = withController ? makeStatus() : makeStatus({ controllerSerial: null, online: false, latest: null });
  useFleetStore(ctx.pinia).replaceAll([status]);
  const faults = opts.faults ?? accept;
  const { calls } = stubFetch((c) => {
    if (c.url === '/api/v1/demo/faults') return faults(c);
    if (c.url === '/api/v1/boxes/5') return json(200, box);
    if (c.url === '/api/v1/boxes/5/latest') return status.latest ? json(200, status.latest) : problem(404, { type: 'x', title: 'Not found' });
    if (c.url.startsWith('/api/v1/boxes/5/readings')) return json(200, { boxId: 5, resolution: 'raw', from: '', to: '', points: [] });
    if (c.url === '/api/v1/boxes/5/settings/changes') return json(200, []);
    return problem(404, { type: 'x', title: 'Not found' });
  });
  await ctx.router.push('/boxes/5');
  const wrapper = mountView(BoxDetailView, ctx, { id: '5' });
  await flushPromises();
  const faultPosts = () => calls.filter((c) => c.url === '/api/v1/demo/faults');
  return { ...ctx, wrapper, calls, faultPosts };
}

describe('demo fault panel: who sees it', () => {
  it('is shown to an admin in demo mode, marked as a simulation, with one switch per simulator fault', async () => {
    const { wrapper } = await openBox();
    const panel = wrapper.find('[data-test="demo-faults"]');
    expect(panel.exists()).toBe(true);
    expect(panel.text()).toMatch(/simulat/i);
    expect(panel.text()).toContain('Demo');
    for (const f of FAULT_NAMES) {
      expect(panel.find(`[data-test="fault-${f}"]`).exists()).toBe(true);
      expect(panel.text()).toContain(FAULT_WORDS[f].label);
      expect(panel.text()).toContain(FAULT_WORDS[f].hint);
    }
    expect(panel.find('[data-test="caution-notADiagnosis"]').exists()).toBe(true);
  });

  it('is not shown to an admin when the server is not in demo mode', async () => {
    const { wrapper } = await openBox({ demoMode: false });
    expect(wrapper.find('[data-test="box-name"]').exists()).toBe(true);
    expect(wrapper.find('[data-test="demo-faults"]').exists()).toBe(false);
  });

  it('is not shown to a technician even in demo mode', async () => {
    const { wrapper } = await openBox({ role: 'technician' });
    expect(wrapper.find('[data-test="box-name"]').exists()).toBe(true);
    expect(wrapper.find('[data-test="demo-faults"]').exists()).toBe(false);
  });

  it('disables the switches of a box without a controller and sends nothing', async () => {
    const { wrapper, faultPosts } = await openBox({ hasController: false });
    const sw = wrapper.find('[data-test="fault-door-ajar"]');
    expect(sw.classes()).toContain('n-switch--disabled');
    await sw.trigger('click');
    await flushPromises();
    expect(faultPosts()).toHaveLength(0);
  });
});

describe('demo fault panel: POST /api/v1/demo/faults', () => {
  it('switches low charge on and then off with { boxId, fault, on } and the CSRF header, no sensor', async () => {
    const { wrapper, faultPosts } = await openBox();
    const sw = () => wrapper.find('[data-test="fault-low-charge"]');
    expect(sw().attributes('aria-checked')).toBe('false');

    await sw().trigger('click');
    await flushPromises();
    expect(faultPosts()).toHaveLength(1);
    const on = faultPosts()[0];
    expect(on?.method).toBe('POST');
    expect(on?.headers['x-csrf-token']).toBe('csrf-test-token');
    expect(on?.body).toStrictEqual({ boxId: 5, fault: 'low-charge', on: true });
    expect(DemoFaultBody.safeParse(on?.body).success).toBe(true);
    expect(sw().attributes('aria-checked')).toBe('true');

    await sw().trigger('click');
    await flushPromises();
    expect(faultPosts()).toHaveLength(2);
    expect(faultPosts()[1]?.body).toStrictEqual({ boxId: 5, fault: 'low-charge', on: false });
    expect(sw().attributes('aria-checked')).toBe('false');
  });

  it('sends the suction-line thermistor by default for a sensor fault', async () => {
    const { wrapper, faultPosts } = await openBox();
    await wrapper.find('[data-test="fault-thermistor-open"]').trigger('click');
    await flushPromises();
    expect(faultPosts()[0]?.body).toStrictEqual({ boxId: 5, fault: 'thermistor-open', on: true, sensor: 'suctionLineC' });
  });

  it('sends the thermistor picked in the list for a shorted sensor', async () => {
    const { wrapper, faultPosts } = await openBox();
    await wrapper.find('[data-test="fault-sensor-thermistor-shorted"] .n-base-selection').trigger('click');
    await flushPromises();
    const option = [...document.querySelectorAll<HTMLElement>('.n-base-select-option')].find((el) => el.textContent?.trim() === 'Box air');
    expect(option).toBeDefined();
    option?.click();
    await flushPromises();
    await wrapper.find('[data-test="fault-thermistor-shorted"]').trigger('click');
    await flushPromises();
    expect(faultPosts()[0]?.body).toStrictEqual({ boxId: 5, fault: 'thermistor-shorted', on: true, sensor: 'boxAirC' });
  });

  it('leaves the switch off and says why when the server refuses', async () => {
    const refuse: FaultAnswer = () =>
      problem(403, { type: 'https://rimehold.example.com/problems/forbidden', title: 'Forbidden', detail: 'Fault injection is only available in demo mode.' });
    const { wrapper, faultPosts } = await openBox({ faults: refuse });
    await wrapper.find('[data-test="fault-door-ajar"]').trigger('click');
    await flushPromises();
    expect(faultPosts()).toHaveLength(1);
    expect(wrapper.find('[data-test="fault-door-ajar"]').attributes('aria-checked')).toBe('false');
    expect(wrapper.find('[data-test="demo-faults-error"]').text()).toBe('Door left ajar: Fault injection is only available in demo mode.');
  });

  it('remembers the faults switched on from this tab when the page is opened again', async () => {
    const first = await openBox();
    await first.wrapper.find('[data-test="fault-iced-coil"]').trigger('click');
    await flushPromises();
    expect(JSON.parse(sessionStorage.getItem(DEMO_FAULTS_STORAGE_KEY) ?? '{}')).toMatchObject({ 5: { 'iced-coil': { at: expect.any(String) } } });
    first.wrapper.unmount();

    const again = await openBox();
    expect(again.wrapper.find('[data-test="fault-iced-coil"]').attributes('aria-checked')).toBe('true');
    expect(again.wrapper.find('[data-test="fault-door-ajar"]').attributes('aria-checked')).toBe('false');
    expect(again.faultPosts()).toHaveLength(0);
  });
});
