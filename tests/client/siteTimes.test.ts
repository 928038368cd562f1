/** Times on the box page's settings history read in the site's zone, with the zone named. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import SettingsChanges from '@/components/SettingsChanges.vue';
import type { SettingsChangeDto } from '@shared/schemas/settings';
import { mountView, setup, stubFetch, problem } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const change: SettingsChangeDto = {
  id: 'c1',
  boxId: 5,
  requested: { superheatTargetK: 4 },
  applied: { superheatTargetK: 4 },
  state: 'applied',
  requestedBy: 1,
  requestedAt: '2030-01-15T18:05:00.000Z',
  resolvedAt: '2030-01-15T18:06:00.000Z',
  error: null,
};

describe('settings changes', () => {
  it("shows when a change was requested and resolved in the site's zone, naming it", async () => {
    const ctx = setup({ role: 'technician', unitSystem: 'imperial' });
    stubFetch(() => problem(404, { type: 'x', title: 'Not found' }));
    // America/Chicago is UTC−6 in January (IANA tz database); the tests run in UTC.
    const w = mountView(SettingsChanges, ctx, { changes: [change], timeZone: 'America/Chicago' });
    // Installing the router starts its first navigation (a lazily loaded page): let it finish inside the test.
    await ctx.router.isReady();
    await flushPromises();
    const text = w.find('[data-test="settings-change"]').text();
    expect(text).toMatch(/Requested [^·]*12:05[^·]*(CST|GMT-6)/);
    expect(text).toMatch(/resolved [^·]*12:06[^·]*(CST|GMT-6)/);
    w.unmount();
  });
});
