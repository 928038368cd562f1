/** The dev mailbox: the server's message shape, plain text only, safe links. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import MailboxView from '@/views/admin/MailboxView.vue';
import { installHttpWiring } from '@/api/wiring';
import { mailParts, recipientsText, safeHref } from '@/lib/mailText';
import type { MailboxMessage } from '@/api/dev';
import { json, mountView, setup, stubFetch } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const INVITE: MailboxMessage = {
  id: 2,
  from: 'no-reply@example.com',
  to: ['dana.tech@example.net', 'office@example.com'],
  subject: 'Set your Rimehold password',
  text: 'Hello,\n<b>not bold</b> <img src=x onerror=alert(1)>\nSet your password: http://127.0.0.1:3000/set-password?token=abcdefghijklmnopqrstuvwx.\nThanks',
  receivedAt: '2030-01-15T12:05:00.000Z',
};
const OLDER: MailboxMessage = { id: 1, from: '', to: [], subject: 'Older', text: 'plain', receivedAt: '2030-01-15T11:00:00.000Z' };

async function openMailbox(devMailbox: boolean) {
  const ctx = setup({ role: 'admin', features: { devMailbox } });
  installHttpWiring(ctx.router, ctx.pinia);
  const { calls } = stubFetch(() => json(200, [OLDER, INVITE]));
  await ctx.router.push('/admin/mailbox');
  const wrapper = mountView(MailboxView, ctx);
  await flushPromises();
  return { wrapper, calls };
}

describe('mail text', () => {
  it('splits out http(s) links, leaving trailing punctuation as text, and loses nothing', () => {
    const parts = mailParts(INVITE.text);
    expect(parts.map((p) => p.text).join('')).toBe(INVITE.text);
    const links = parts.filter((p) => p.href);
    expect(links).toEqual([
      { text: 'http://127.0.0.1:3000/set-password?token=abcdefghijklmnopqrstuvwx', href: 'http://127.0.0.1:3000/set-password?token=abcdefghijklmnopqrstuvwx' },
    ]);
  });

  it('never makes a link of another scheme', () => {
    expect(safeHref('javascript:alert(1)')).toBeNull();
    expect(safeHref('data:text/html,hi')).toBeNull();
    expect(mailParts('go javascript:alert(1) now').every((p) => p.href === undefined)).toBe(true);
  });

  it('joins recipients', () => {
    expect(recipientsText(['a@example.com', 'b@example.net'])).toBe('a@example.com, b@example.net');
    expect(recipientsText([])).toBe('(no recipient)');
  });
});

describe('MailboxView', () => {
  it('lists messages newest first with joined recipients and the sender', async () => {
    const { wrapper } = await openMailbox(true);
    const metas = wrapper.findAll('[data-test="mail-meta"]').map((m) => m.text());
    expect(metas).toHaveLength(2);
    expect(metas[0]).toContain('to dana.tech@example.net, office@example.com · from no-reply@example.com');
    expect(metas[1]).toContain('to (no recipient)');
    expect(wrapper.text().indexOf('Set your Rimehold password')).toBeLessThan(wrapper.text().indexOf('Older'));
  });

  it('renders the body as preformatted text, never as HTML, with the set-password link clickable', async () => {
    const { wrapper } = await openMailbox(true);
    await wrapper.find('.n-collapse-item__header-main').trigger('click');
    await flushPromises();
    const body = wrapper.find('[data-test="mail-body"]');
    expect(body.element.tagName).toBe('PRE');
    expect(body.find('b').exists()).toBe(false);
    expect(body.find('img').exists()).toBe(false);
    expect(body.text()).toContain('<b>not bold</b> <img src=x onerror=alert(1)>');
    const links = body.findAll('a');
    expect(links).toHaveLength(1);
    expect(links[0]?.attributes('href')).toBe('http://127.0.0.1:3000/set-password?token=abcdefghijklmnopqrstuvwx');
    expect(links[0]?.attributes('rel')).toBe('noopener noreferrer');
  });

  it('does not ask the server when the session says the mailbox is off', async () => {
    const { wrapper, calls } = await openMailbox(false);
    expect(calls.filter((c) => c.url.includes('/dev/mailbox'))).toHaveLength(0);
    expect(wrapper.text()).toContain('The dev mailbox is off on this server.');
  });
});
