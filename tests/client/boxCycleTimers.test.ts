/** The box page's cycle timers: figures from GET /boxes/:id/cycles, "not scheduled" when no defrost start is known. */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import BoxCycleTimers from '@/components/BoxCycleTimers.vue';
import type { BoxCyclesDto } from '@shared/schemas/cycles';
import { json, mountView, problem, setup, stubFetch, testText } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

const MIN = 60_000;
const iso = (ms: number) => new Date(ms).toISOString();

function answer(now: number, over: Partial<BoxCyclesDto['defrost']> = {}): BoxCyclesDto {
  return {
    boxId: 5,
    asOf: iso(now),
    windowFrom: iso(now - 13 * 60 * MIN),
    lastReadingAt: iso(now - 5000),
    current: true,
    timeZone: 'UTC',
    compressor: { on: true, sinceAt: iso(now - 12 * MIN), sinceBeforeWindow: false, startsLastHour: 3, startsAt: [iso(now - 50 * MIN), iso(now - 30 * MIN), iso(now - 12 * MIN)] },
    defrost: { on: false, lastStartAt: iso(now - 5 * 60 * MIN), lastEndAt: iso(now - 270 * MIN), lastDurationMin: 30, intervalH: 6, nextDueAt: iso(now + 60 * MIN), ...over },
    door: { open: false, sinceAt: iso(now - 5 * MIN), sinceBeforeWindow: false, openTodayMin: 15, openingsToday: 1, countedUntil: iso(now), dayStartAt: iso(now - 60 * MIN), dayEndAt: iso(now + 23 * 60 * MIN) },
  };
}

async function mountTimers(dto: BoxCyclesDto) {
  const ctx = setup({ role: 'technician', unitSystem: 'imperial' });
  const fetched = stubFetch((c) => (c.url.startsWith('/api/v1/boxes/5/cycles') ? json(200, dto) : problem(404, { type: 'x', title: 'Not found' })));
  await ctx.router.push('/boxes/5');
  const w = mountView(BoxCycleTimers, ctx, { boxId: 5, timeZone: 'UTC' });
  await flushPromises();
  return { w, fetched };
}

describe('box cycle timers', () => {
  it('shows the run time, starts in the last hour, the last and next defrost and door time today', async () => {
    const { w, fetched } = await mountTimers(answer(Date.now()));
    expect(fetched.calls.some((c) => c.url.startsWith('/api/v1/boxes/5/cycles'))).toBe(true);
    expect(testText(w, 'cycle-compressor')).toBe('Running for 12 min');
    expect(testText(w, 'cycle-starts')).toBe('3');
    expect(testText(w, 'cycle-defrost-last')).toBe('Ended 4 h 30 min ago');
    expect(testText(w, 'cycle-defrost-next')).toMatch(/^In (59|60) min \(/);
    expect(testText(w, 'cycle-door')).toBe('Closed');
    expect(testText(w, 'cycle-door-today')).toBe('15 min');
  });

  it('says "Not scheduled" when no defrost start is known, rather than guessing a time', async () => {
    const { w } = await mountTimers(answer(Date.now(), { lastStartAt: null, lastEndAt: null, lastDurationMin: null, nextDueAt: null }));
    expect(testText(w, 'cycle-defrost-next')).toBe('Not scheduled');
    expect(w.find('[data-test="cycle-defrost-next"]').attributes('title')).toContain('nothing to time the next one from');
  });
});
