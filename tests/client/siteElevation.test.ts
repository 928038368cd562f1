/** The site form takes elevation in the user's length unit (ft for imperial) and stores metres. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import SitesView from '@/views/customers/SitesView.vue';
import type { SiteDto } from '@shared/schemas/customers';
import { json, mountView, problem, setup, stubFetch } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const site: SiteDto = {
  id: 4,
  customerId: 3,
  customerName: 'Northfield Grocers',
  name: 'Depot',
  address: null,
  timeZone: 'America/Denver',
  // 304.8 m = 1000 ft exactly (1 ft = 0.3048 m, international yard and pound agreement 1959).
  elevationM: 304.8,
  boxCount: 0,
  createdAt: '2026-01-01T00:00:00.000Z',
  updatedAt: '2026-01-01T00:00:00.000Z',
};

async function openSites(unitSystem: 'imperial' | 'metric-kpa') {
  const ctx = setup({ role: 'admin', unitSystem });
  const fetched = stubFetch((c) => {
    if (c.url.startsWith('/api/v1/sites') && c.method === 'GET') return json(200, { items: [site], page: 1, pageSize: 50, total: 1 });
    if (c.url === '/api/v1/sites/4' && c.method === 'PATCH') return json(200, { ...site, ...(c.body as object) });
    if (c.url.startsWith('/api/v1/customers')) return json(200, { items: [{ id: 3, name: 'Northfield Grocers' }], page: 1, pageSize: 200, total: 1 });
    return problem(404, { type: 'x', title: 'Not found' });
  });
  await ctx.router.push('/sites');
  const w = mountView(SitesView, ctx);
  await flushPromises();
  return { w, fetched };
}

function input(): HTMLInputElement {
  const el = document.querySelector<HTMLInputElement>('input[data-test="site-elevation"]');
  if (!el) throw new Error('no elevation input');
  return el;
}

describe('site elevation units', () => {
  it('lists and edits elevation in feet for an imperial user, saving metres', async () => {
    const { w, fetched } = await openSites('imperial');
    expect(w.text()).toContain('1000 ft');
    expect(w.text()).not.toContain('304.8 m');
    const edit = w.findAll('button').find((b) => b.text() === 'Edit');
    await edit!.trigger('click');
    await flushPromises();
    expect(input().value).toBe('1000');
    expect(document.body.textContent).toContain('Elevation above sea level (ft)');
    input().value = '5280';
    input().dispatchEvent(new Event('input'));
    await flushPromises();
    document.querySelector<HTMLFormElement>('.n-card form')!.dispatchEvent(new Event('submit'));
    await flushPromises();
    const patch = fetched.calls.find((c) => c.method === 'PATCH');
    // 5280 ft = 1609.344 m (1 ft = 0.3048 m exactly).
    expect((patch?.body as { elevationM: number }).elevationM).toBeCloseTo(1609.344, 9);
  });

  it('sends the stored metres back unchanged when the field was not edited', async () => {
    const { w, fetched } = await openSites('imperial');
    await w.findAll('button').find((b) => b.text() === 'Edit')!.trigger('click');
    await flushPromises();
    document.querySelector<HTMLFormElement>('.n-card form')!.dispatchEvent(new Event('submit'));
    await flushPromises();
    const patch = fetched.calls.find((c) => c.method === 'PATCH');
    expect((patch?.body as { elevationM: number }).elevationM).toBe(304.8);
  });

  it('keeps metres for a metric user', async () => {
    const { w } = await openSites('metric-kpa');
    expect(w.text()).toContain('305 m');
    await w.findAll('button').find((b) => b.text() === 'Edit')!.trigger('click');
    await flushPromises();
    expect(input().value).toBe('305');
  });
});
