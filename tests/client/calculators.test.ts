import { afterEach, describe, expect, it } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import PressureTemperatureView from '@/views/tools/PressureTemperatureView.vue';
import SuperheatView from '@/views/tools/SuperheatView.vue';
import { firstNumber, mountView, setup, testText } from './helpers';
import type { UnitSystemPref } from '@shared/domain';

afterEach(() => {
  document.body.innerHTML = '';
  localStorage.clear();
});

async function open(view: typeof PressureTemperatureView, path: string, query: Record<string, string>, unitSystem: UnitSystemPref = 'imperial') {
  const ctx = setup({ role: 'technician', unitSystem });
  await ctx.router.push({ path, query });
  const wrapper = mountView(view, ctx);
  await flushPromises();
  return wrapper;
}

describe('PressureTemperatureView', () => {
  it('gives R-134a 6.5 psig at 0 °F (temperature → pressure)', async () => {
    const w = await open(PressureTemperatureView, '/tools/pressure-temperature', { refrigerant: 'R-134a', mode: 'temperature' });
    await w.find('[data-test="pt-temperature"]').setValue('0');
    await flushPromises();
    // NIST-REFPROP-based R-134a P-T chart (calcspec.com), TRADE-NOTES #19: 0 °F = 6.5 psig; chart tolerance ±0.3 psi.
    expect(testText(w, 'pt-dew')).toMatch(/psig$/);
    expect(Math.abs(firstNumber(testText(w, 'pt-dew')) - 6.5)).toBeLessThanOrEqual(0.3);
    expect(Math.abs(firstNumber(testText(w, 'pt-bubble')) - 6.5)).toBeLessThanOrEqual(0.3);
    expect(testText(w, 'pt-curve-note')).toMatch(/dew.*superheat.*bubble.*subcooling/s);
  });

  it('gives R-134a about 0 °F at 6.5 psig and 40 °F at 35.0 psig (pressure → temperature)', async () => {
    const w = await open(PressureTemperatureView, '/tools/pressure-temperature', { refrigerant: 'R-134a' });
    const input = w.find('[data-test="pt-pressure"]');
    await input.setValue('6.5');
    await flushPromises();
    // Same chart (TRADE-NOTES #19). ±0.3 psi there is about ±0.6 °F here (dP/dT ≈ 0.5 psi/°F near 0 °F).
    expect(testText(w, 'pt-dew')).toMatch(/°F$/);
    expect(Math.abs(firstNumber(testText(w, 'pt-dew')) - 0)).toBeLessThanOrEqual(0.6);
    await input.setValue('35.0');
    await flushPromises();
    // TRADE-NOTES #19: 40 °F = 35.0 psig; dP/dT ≈ 0.8 psi/°F there, so ±0.3 psi ≈ ±0.4 °F.
    expect(Math.abs(firstNumber(testText(w, 'pt-dew')) - 40)).toBeLessThanOrEqual(0.4);
  });

  it('reads gauge pressure against the thinner air of a high site, the elevation given in feet', async () => {
    const w = await open(PressureTemperatureView, '/tools/pressure-temperature', { refrigerant: 'R-134a' });
    // Altitude table, TRADE-NOTES #24: 12.2 psia at 5,000 ft (1,524 m), i.e. a gauge reads 2.5 psi higher than at
    // sea level for the same absolute pressure. So 9.0 psig there = 6.5 psig at sea level = 0 °F for R-134a
    // (TRADE-NOTES #19). Tolerance ±0.8 °F: ±0.3 psi chart + ±0.1 psi table ≈ ±0.4 psi at ~0.5 psi/°F.
    // An imperial user enters the elevation in feet, like the pressures in psig.
    await w.find('[data-test="pt-elevation"]').setValue('5000');
    await w.find('[data-test="pt-pressure"]').setValue('9.0');
    await flushPromises();
    expect(Math.abs(firstNumber(testText(w, 'pt-dew')) - 0)).toBeLessThanOrEqual(0.8);
  });

  it('shows dew and bubble apart for a zeotropic blend', async () => {
    const w = await open(PressureTemperatureView, '/tools/pressure-temperature', { refrigerant: 'R-407C' });
    await w.find('[data-test="pt-pressure"]').setValue('80');
    await flushPromises();
    // hvacrschool mid-point article, TRADE-NOTES #22: at 80 psig bubble 40.0 °F, dew 50.8 °F, glide 10.8 °F;
    // ±0.3 °F as in tests/shared/refrigerants.test.ts (the display rounds to 0.1 °F).
    expect(Math.abs(firstNumber(testText(w, 'pt-bubble')) - 40.0)).toBeLessThanOrEqual(0.35);
    expect(Math.abs(firstNumber(testText(w, 'pt-dew')) - 50.8)).toBeLessThanOrEqual(0.35);
    expect(Math.abs(firstNumber(testText(w, 'pt-glide')) - 10.8)).toBeLessThanOrEqual(0.35);
  });

  it('shows the engine error for out-of-range input, never NaN', async () => {
    const w = await open(PressureTemperatureView, '/tools/pressure-temperature', { refrigerant: 'R-134a' });
    // −14 psig ≈ 0.7 psia (4.8 kPa abs): below R-134a's −60 °C table end (15.9 kPa abs, CoolProp 8.0.0).
    await w.find('[data-test="pt-pressure"]').setValue('-14');
    await flushPromises();
    expect(testText(w, 'pt-error')).toMatch(/outside the valid range/);
    expect(testText(w, 'pt-dew')).toBe('—');
    // 9,000 psig is above R-134a's critical pressure (4,059 kPa abs, CoolProp 8.0.0): said as supercritical.
    await w.find('[data-test="pt-pressure"]').setValue('9000');
    await flushPromises();
    expect(testText(w, 'pt-error')).toMatch(/^Supercritical/);
    expect(testText(w, 'pt-dew')).toBe('—');
    expect(w.html()).not.toContain('NaN');
    await w.find('[data-test="pt-pressure"]').setValue('abc');
    await flushPromises();
    expect(testText(w, 'pt-error')).toMatch(/Enter a number/);
    expect(w.html()).not.toContain('NaN');
  });

  it('shows the flammable caution for an A2L and the high-pressure caution for R-744', async () => {
    const a2l = await open(PressureTemperatureView, '/tools/pressure-temperature', { refrigerant: 'R-454C' });
    expect(a2l.find('[data-test="caution-flammable"]').exists()).toBe(true);
    expect(a2l.find('[data-test="caution-notADiagnosis"]').exists()).toBe(true);
    document.body.innerHTML = '';
    const co2 = await open(PressureTemperatureView, '/tools/pressure-temperature', { refrigerant: 'R-744' });
    expect(co2.find('[data-test="caution-highPressure"]').exists()).toBe(true);
    expect(co2.find('[data-test="caution-flammable"]').exists()).toBe(false);
  });
});

describe('SuperheatView', () => {
  async function superheat(line: string, query: Record<string, string> = {}) {
    const w = await open(SuperheatView, '/tools/superheat', { refrigerant: 'R-134a', target: '8', band: '2', ...query });
    await w.find('[data-test="sh-suction-pressure"]').setValue('6.5');
    await w.find('[data-test="sh-suction-line"]').setValue(line);
    await flushPromises();
    return w;
  }

  it('computes superheat from the dew point and says it is in band', async () => {
    const w = await superheat('8');
    // 6.5 psig R-134a saturates at 0 °F (calcspec.com P-T chart, TRADE-NOTES #19; ±0.6 °F from ±0.3 psi),
    // so a suction line at 8 °F means about 8 °F of superheat.
    expect(Math.abs(firstNumber(testText(w, 'sh-result')) - 8)).toBeLessThanOrEqual(0.6);
    expect(testText(w, 'sh-result')).toMatch(/°F$/);
    expect(testText(w, 'sh-verdict')).toMatch(/^In band/);
    expect(testText(w, 'sh-verdict')).toMatch(/within the target band of 6\.0 °F to 10\.0 °F/);
    expect(w.text()).toContain('not a diagnosis');
  });

  it('says low, and names the evaporator superheat floor, for a small superheat', async () => {
    const w = await superheat('2');
    expect(testText(w, 'sh-verdict')).toMatch(/^Low/);
    // EVAPORATOR_SUPERHEAT_FLOOR_K is 5 °F (common practice, shared/field/superheat.ts): an evaporator floor, not a compressor rating.
    expect(testText(w, 'sh-verdict')).toMatch(/5\.0 °F evaporator superheat floor/);
    expect(testText(w, 'sh-verdict')).not.toMatch(/protect the compressor/);
  });

  it('says supercritical for an R-744 high side above its 1,055 psig critical pressure and shows the gas-cooler outlet and approach', async () => {
    // CoolProp 8.0.0 / NIST WebBook: CO₂ critical pressure 7,377.3 kPa abs = 1,055.3 psig at sea level (TRADE-NOTES #29: ~1,055 psig).
    const w = await open(SuperheatView, '/tools/superheat', { refrigerant: 'R-744' });
    await w.find('[data-test="sc-liquid-pressure"]').setValue('1305'); // about 90 bar: a warm-day gas cooler (common practice)
    await w.find('[data-test="sc-liquid-line"]').setValue('95');
    await w.find('[data-test="sc-gas-cooler-air"]').setValue('90');
    await flushPromises();
    expect(testText(w, 'sc-supercritical')).toMatch(/^Supercritical/);
    expect(testText(w, 'sc-supercritical')).toContain('no subcooling');
    expect(testText(w, 'sc-gas-cooler-outlet')).toBe('95.0 °F');
    expect(testText(w, 'sc-approach')).toBe('5.0 °F'); // approach = outlet − entering air (common practice)
    expect(w.find('[data-test="sc-result"]').exists()).toBe(false);
    expect(w.html()).not.toContain('NaN');
  });

  it('gives R-744 subcooling just below the critical point, at 30 °C', async () => {
    // CoolProp 8.0.0 HEOS::CarbonDioxide: 30 °C saturation 7,213.7 kPa abs = 1,031.6 psig at sea level;
    // liquid at 80.6 °F (27 °C) → 3 K = 5.4 °F of subcooling.
    const w = await open(SuperheatView, '/tools/superheat', { refrigerant: 'R-744' });
    await w.find('[data-test="sc-liquid-pressure"]').setValue('1031.6');
    await w.find('[data-test="sc-liquid-line"]').setValue('80.6');
    await flushPromises();
    expect(testText(w, 'sc-result')).toBe('5.4 °F');
    expect(w.find('[data-test="sc-supercritical"]').exists()).toBe(false);
  });

  it('gives R-404A subcooling at a 55 °C (131 °F) hot-day head', async () => {
    // CoolProp 8.0.0 HEOS::R404A.mix: 55 °C bubble point 2,585.1 kPa abs = 360.2 psig at sea level;
    // liquid at 122 °F (50 °C) → 5 K = 9.0 °F of subcooling (±0.1 °F for the rounded pressure).
    const w = await open(SuperheatView, '/tools/superheat', { refrigerant: 'R-404A' });
    await w.find('[data-test="sc-liquid-pressure"]').setValue('360.2');
    await w.find('[data-test="sc-liquid-line"]').setValue('122');
    await flushPromises();
    expect(Math.abs(firstNumber(testText(w, 'sc-result')) - 9)).toBeLessThanOrEqual(0.1);
  });

  it('says high for a large superheat', async () => {
    const w = await superheat('20');
    expect(testText(w, 'sh-verdict')).toMatch(/^High/);
  });

  it('warns about glide with the coil-thermistor method on a zeotrope', async () => {
    const w = await open(SuperheatView, '/tools/superheat', { refrigerant: 'R-407C', method: 'coil-thermistor' });
    await w.find('[data-test="sh-coil-inlet"]').setValue('20');
    await w.find('[data-test="sh-suction-line"]').setValue('30');
    await flushPromises();
    // Common practice: two-thermistor superheat = suction-line − coil-inlet temperature (30 − 20 °F).
    expect(firstNumber(testText(w, 'sh-result'))).toBeCloseTo(10, 5);
    expect(testText(w, 'sh-glide-warning')).toMatch(/overstate superheat/);
    // CoolProp 8.0.0 HEOS::R407C.mix: at the pressure whose bubble point is 20 °F the dew point is 11.30 °F higher,
    // so against the dew point the same readings give 10 − 11.30 = −1.3 °F, the figure the box page shows.
    expect(firstNumber(testText(w, 'sh-against-dew'))).toBeCloseTo(-1.3, 1);
  });

  it('shows the engine error for an impossible suction pressure, never NaN', async () => {
    const w = await superheat('10');
    await w.find('[data-test="sh-suction-pressure"]').setValue('-20');
    await flushPromises();
    expect(testText(w, 'sh-error')).toMatch(/outside the valid range/);
    expect(testText(w, 'sh-result')).toBe('—');
    expect(w.html()).not.toContain('NaN');
  });

  it('works in metric units too (K differences)', async () => {
    const w = await open(SuperheatView, '/tools/superheat', { refrigerant: 'R-134a' }, 'metric-bar');
    // R-134a dew point at 2.00 bar abs is −10.09 °C (textbook superheated table, TRADE-NOTES #20);
    // at sea level that is 2.00 − 1.01325 = 0.987 bar(g).
    await w.find('[data-test="sh-suction-pressure"]').setValue('0.987');
    await w.find('[data-test="sh-suction-line"]').setValue('-5.09');
    await flushPromises();
    expect(testText(w, 'sh-result')).toMatch(/K$/);
    expect(Math.abs(firstNumber(testText(w, 'sh-result')) - 5)).toBeLessThanOrEqual(0.1);
  });
});
