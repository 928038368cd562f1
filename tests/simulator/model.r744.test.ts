import { describe, expect, it } from 'vitest';
import { DEMO_CUSTOMERS } from '../../server/seed/demoData';
import { checkSettings } from '../../simulator/model/settings';
import { makeBox } from './helpers';

describe('R-744 in the simulator and the demo', () => {
  it('seeds no R-744 box while the model has no gas cooler or cascade', () => {
    const refrigerants = DEMO_CUSTOMERS.flatMap((c) => c.sites.flatMap((s) => s.boxes.map((b) => b.refrigerant)));
    expect(refrigerants.length).toBe(24);
    expect(refrigerants).not.toContain('R-744');
  });

  it('refuses to switch a simulated box to R-744 and says why', () => {
    const box = makeBox({ kind: 'freezer' });
    const r = checkSettings(box, { refrigerant: 'R-744' });
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.error).toMatch(/not simulated.*gas cooler/);
    // Other changes to a subcritical box are still accepted.
    expect(checkSettings(box, { setpointC: -21 }).ok).toBe(true);
  });
});
