/** The service-visit page: a technician on a phone can take a photo or pick photos and PDFs already on it. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import { installHttpWiring } from '@/api/wiring';
import type { VisitDto } from '@shared/schemas/visits';
import { json, mountView, setup, stubFetch } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const VISIT: VisitDto = {
  id: 4, customerId: 3, siteId: 7, siteName: 'North store', boxId: 11, boxName: 'Prep cooler', visitedOn: '2026-11-26', technicianId: 2, technicianName: 'Test technician',
  findings: 'Bubbles in the sight glass.', workDone: 'Leak at a flare fitting repaired.', parts: [], timeOnSiteMin: 95, status: 'open', closedAt: null, alarms: [], checks: null,
  attachments: [], createdAt: '2026-11-26T15:00:00.000Z', updatedAt: '2026-11-26T15:00:00.000Z',
};

async function mountVisit(role: 'technician' | 'manager') {
  const ctx = setup({ role });
  installHttpWiring(ctx.router, ctx.pinia);
  stubFetch(() => json(200, VISIT));
  await ctx.router.push('/records/visits/4');
  const { default: VisitDetailView } = await import('@/views/records/VisitDetailView.vue');
  const wrapper = mountView(VisitDetailView, ctx, { id: '4' });
  await flushPromises();
  return wrapper;
}

describe('VisitDetailView uploads', () => {
  it('offers the camera for a photo and, apart from it, a picker for photos and PDFs (capture would hide the files)', async () => {
    const wrapper = await mountVisit('technician');
    const camera = wrapper.find('[data-test="visit-camera"]');
    expect(camera.attributes('capture')).toBe('environment');
    expect(camera.attributes('accept')).toBe('image/*');
    const files = wrapper.find('[data-test="visit-files"]');
    expect(files.attributes('capture')).toBeUndefined();
    expect(files.attributes('accept')).toContain('application/pdf');
    expect(files.attributes('multiple')).toBeDefined();
  });

  it('offers no upload to a manager, who reads visits only', async () => {
    const wrapper = await mountVisit('manager');
    expect(wrapper.find('[data-test="visit-detail"]').text()).toContain('Leak at a flare fitting repaired.');
    expect(wrapper.find('[data-test="visit-files"]').exists()).toBe(false);
  });
});
