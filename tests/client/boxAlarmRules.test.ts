/** The box page's alarm-rule table: defaults with their source, overrides in the user's units, read-only for managers. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import type { BoxAlarmRulesDto } from '@shared/schemas/alarms';
import BoxAlarmRules from '@/components/BoxAlarmRules.vue';
import { installHttpWiring } from '@/api/wiring';
import { json, mountView, setup, stubFetch } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const values = (threshold: number, delayMin = 30) => ({ enabled: true, threshold, delayMin, clearDelayMin: 5, deadband: 1, priority: 'high' as const });

/** Two rules of a cooler: box-air-high overridden to 8 °C, door-open at its default. */
function rulesDto(): BoxAlarmRulesDto {
  return {
    boxId: 5,
    rules: [
      {
        ruleId: 'box-air-high',
        threshold: { unit: 'C', min: -50, max: 25, integer: false },
        // 5 °C = 41 °F: FDA Food Code 3-501.16(A)(2).
        default: values(5),
        defaultSource: 'cooler 41 °F / 5 °C, FDA Food Code 3-501.16(A)(2)',
        override: { threshold: 8 },
        overrideUpdatedAt: '2026-12-01T10:00:00.000Z',
        overrideUpdatedBy: { id: 7, name: 'Test technician' },
        effective: values(8),
      },
      {
        ruleId: 'door-open',
        threshold: null,
        default: { ...values(0, 5), priority: 'medium' },
        defaultSource: "the box's door alarm delay (3–10 min, common practice)",
        override: null,
        overrideUpdatedAt: null,
        overrideUpdatedBy: null,
        effective: { ...values(0, 5), priority: 'medium' },
      },
    ],
  };
}

describe('BoxAlarmRules', () => {
  it('shows the default and the value in force in the user’s units and sends an override in °C', async () => {
    const ctx = setup({ role: 'technician', unitSystem: 'imperial' });
    installHttpWiring(ctx.router, ctx.pinia);
    const { calls } = stubFetch((c) => (c.method === 'PUT' ? json(200, rulesDto().rules[0]) : json(200, rulesDto())));
    const wrapper = mountView(BoxAlarmRules, ctx, { boxId: 5 });
    await flushPromises();
    await ctx.router.isReady();
    const row = wrapper.find('[data-test="rule-box-air-high"]');
    const cells = row.findAll('td').map((td) => td.text());
    // 5 °C = 41.0 °F, 8 °C = 46.4 °F (exact conversion).
    expect(cells[0]).toContain('41.0 °F');
    expect(cells[2]).toContain('46.4 °F');
    const input = row.find('input[aria-label="Box air too warm threshold override"]');
    expect((input.element as HTMLInputElement).value).toBe('46.4');
    await input.setValue('46');
    const save = row.findAll('button').find((b) => b.text() === 'Save');
    await save?.trigger('click');
    await flushPromises();
    const put = calls.find((c) => c.method === 'PUT');
    expect(put?.url).toContain('/api/v1/boxes/5/alarm-rules/box-air-high');
    // 46 °F = 7.78 °C.
    expect((put?.body as { threshold: number }).threshold).toBeCloseTo(7.7778, 3);
    wrapper.unmount();
  });

  it('gives a manager no inputs, only the values and whether the box differs from the default', async () => {
    const ctx = setup({ role: 'manager', unitSystem: 'metric-kpa' });
    installHttpWiring(ctx.router, ctx.pinia);
    stubFetch(() => json(200, rulesDto()));
    const wrapper = mountView(BoxAlarmRules, ctx, { boxId: 5 });
    await flushPromises();
    await ctx.router.isReady();
    expect(wrapper.findAll('[data-test="box-alarm-rules"] input')).toHaveLength(0);
    expect(wrapper.find('[data-test="rule-box-air-high"]').text()).toContain('Changed for this box');
    expect(wrapper.find('[data-test="rule-door-open"]').text()).toContain('after 5 min');
    wrapper.unmount();
  });
});
