/** The push inbox page (fake push service, admins) and its navigation entry. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import PushInboxView from '@/views/admin/PushInboxView.vue';
import { installHttpWiring } from '@/api/wiring';
import { navFor } from '@/lib/nav';
import { readFeatures, useSessionStore } from '@/stores/session';
import type { PushInboxMessage } from '@shared/schemas/push';
import { json, mountView, setup, stubFetch } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const base = { deviceId: '5b8e0c1e-0000-4000-8000-000000000001', deviceLabel: 'Demo phone (virtual)', ttlS: 3600, topic: 'alarm-12', error: null };
// Invented alarm text; 5 °C is the cooler high limit of 41 °F from FDA Food Code 3-501.16(A)(2).
const ALARM: PushInboxMessage = {
  ...base,
  id: 2,
  receivedAt: '2030-01-15T12:05:00.000Z',
  urgency: 'high',
  text: JSON.stringify({ alarmId: 12, title: 'HIGH alarm: Walk-in 2', body: 'Main kitchen: box air 9.1 °C above 5 °C', priority: 'high', ackUrl: `${window.location.origin}/alarms/12?ack=abcdefghijklmnopqrstuvwxyz`, tag: 'alarm-12' }),
};
const FOREIGN_LINK: PushInboxMessage = { ...base, id: 3, receivedAt: '2030-01-15T12:06:00.000Z', urgency: null, text: JSON.stringify({ title: 'Odd', body: 'elsewhere', ackUrl: 'https://elsewhere.example.net/x' }) };
const BROKEN: PushInboxMessage = { ...base, id: 1, receivedAt: '2030-01-15T11:00:00.000Z', urgency: null, text: null, error: 'record 0 failed authentication (wrong keys or a tampered body)' };

async function openInbox(pushInbox: boolean) {
  const ctx = setup({ role: 'admin', features: { pushInbox } });
  installHttpWiring(ctx.router, ctx.pinia);
  const { calls } = stubFetch(() => json(200, [BROKEN, ALARM, FOREIGN_LINK]));
  await ctx.router.push('/admin/push-inbox');
  const wrapper = mountView(PushInboxView, ctx);
  await flushPromises();
  return { wrapper, calls };
}

describe('PushInboxView', () => {
  it('shows each decrypted alarm push newest first, with its title, text and acknowledgement link', async () => {
    const { wrapper, calls } = await openInbox(true);
    expect(calls.map((c) => c.url)).toEqual(['/api/v1/dev/push-inbox']);
    const items = wrapper.findAll('[data-test="push-message"]');
    expect(items).toHaveLength(3);
    expect(items[1]?.find('[data-test="push-title"]').text()).toBe('HIGH alarm: Walk-in 2');
    expect(items[1]?.find('[data-test="push-body"]').text()).toBe('Main kitchen: box air 9.1 °C above 5 °C');
    expect(items[1]?.find('[data-test="push-ack"]').attributes('href')).toContain('/alarms/12?ack=');
    expect(items[1]?.find('[data-test="push-meta"]').text()).toContain('to Demo phone (virtual)');
    expect(items[2]?.find('[data-test="push-error"]').text()).toContain('failed authentication');
  });

  it('never links to another origin', async () => {
    const { wrapper } = await openInbox(true);
    const first = wrapper.findAll('[data-test="push-message"]')[0];
    expect(first?.find('[data-test="push-title"]').text()).toBe('Odd');
    expect(first?.find('[data-test="push-ack"]').exists()).toBe(false);
  });

  it('says the inbox is off, without asking the server, when the feature is off', async () => {
    const { wrapper, calls } = await openInbox(false);
    expect(wrapper.text()).toContain('The push inbox is off on this server.');
    expect(calls).toEqual([]);
  });
});

describe('push inbox feature', () => {
  it('puts the Push inbox in the admin’s Office menu only when the server reports it, and never for a technician', () => {
    const names = (role: 'admin' | 'technician', on: boolean) => navFor(role, readFeatures({ demoMode: false, devMailbox: false, pushInbox: on })).flatMap((g) => g.items.map((i) => i.name));
    expect(names('admin', true)).toContain('push-inbox');
    expect(names('admin', false)).not.toContain('push-inbox');
    expect(names('technician', true)).not.toContain('push-inbox');
    const { pinia } = setup({ role: 'technician', features: { pushInbox: true } });
    expect(useSessionStore(pinia).showPushInbox).toBe(false);
  });
});
