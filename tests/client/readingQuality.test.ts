/** ReadingQuality shows a reading's stated reasons (failed sensor, glide…) where the value would be. */
import { describe, expect, it } from 'vitest';
import { mount } from '@vue/test-utils';
import ReadingQuality from '@/components/ReadingQuality.vue';
import type { ReadingFlag } from '@shared/schemas/live';

const open: ReadingFlag = { code: 'sensor-open', sensor: 'suctionLineC', affects: ['suctionLineC', 'superheatK'], message: 'Suction-line sensor open (reads −60.0 °C) — no superheat' };
const negative: ReadingFlag = { code: 'negative-subcooling', affects: ['subcoolingK'], message: 'Negative subcooling (−2.0 K): flash gas in the liquid line, or a bad liquid-line sensor or transducer' };

describe('ReadingQuality', () => {
  it('shows every reason with its words when no value is named, a failed sensor as a fault and negative subcooling as a note', () => {
    const w = mount(ReadingQuality, { props: { flags: [open, negative] } });
    const items = w.findAll('[data-test="reading-quality"] li');
    expect(items.map((i) => i.text())).toEqual([open.message, negative.message]);
    expect(items[0]?.classes()).toContain('fault');
    expect(items[1]?.classes()).toContain('note');
    expect(items[0]?.attributes('data-code')).toBe('sensor-open');
    expect(items[0]?.find('svg').exists()).toBe(true);
  });

  it('shows only the reasons that concern the value it stands beside', () => {
    const w = mount(ReadingQuality, { props: { flags: [open, negative], field: 'superheatK' } });
    expect(w.text()).toContain('no superheat');
    expect(w.text()).not.toContain('subcooling');
  });

  it('renders nothing for a reading without reasons (or stored before they were kept)', () => {
    expect(mount(ReadingQuality, { props: { flags: [] } }).find('[data-test="reading-quality"]').exists()).toBe(false);
    expect(mount(ReadingQuality, { props: { flags: undefined } }).find('[data-test="reading-quality"]').exists()).toBe(false);
  });
});
