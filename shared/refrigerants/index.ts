// Refrigerant saturation engine: pressure <-> temperature on the dew and bubble curves.
//
// Data: shared/refrigerants/data.generated.ts (CoolProp 8.0.0, see its header), ln(P) on a uniform
// temperature grid of <= 1 K. At module load every curve is turned into two piecewise-cubic
// Hermite tables with precomputed polynomial coefficients:
//   forward  T -> ln P, on the generated temperature grid;
//   inverse  ln P -> T, on a uniform ln P grid whose node temperatures are solved from the forward
//            table, so the two directions agree to far better than 0.001 K.
// A call is then one range check, one Math.log or Math.exp, an index and a cubic: no allocation.
import {
  GENERATED_IDS,
  GENERATED_REFRIGERANTS,
  GENERATED_SOURCE,
  LN_P_SCALE,
  type GeneratedRefrigerant,
} from './data.generated';
import { RefrigerantRangeError, SupercriticalError, UnknownRefrigerantError } from './errors';

/** Every refrigerant id Rimehold knows, as ASHRAE 34 writes it; a readonly tuple usable in `z.enum`. */
export const REFRIGERANT_IDS = GENERATED_IDS;
export type RefrigerantId = (typeof REFRIGERANT_IDS)[number];
export type SafetyClass = GeneratedRefrigerant['safetyClass'];
export type RefrigerantKind = GeneratedRefrigerant['kind'];
/** dew = saturated vapour (use for superheat); bubble = saturated liquid (use for subcooling). */
export type SaturationCurveName = 'dew' | 'bubble';
export type RefrigerantQuantity = 'temperatureC' | 'pressureKPaAbs';

export interface PressureRangeKPaAbs {
  readonly min: number;
  readonly max: number;
}

export interface RefrigerantInfo {
  readonly id: RefrigerantId;
  /** Chemical name, or blend composition in % by mass (ASHRAE 34 nominal). */
  readonly name?: string;
  readonly safetyClass: SafetyClass;
  /** 100-year global warming potential, IPCC AR4 basis. */
  readonly gwp: number;
  readonly gwpSource: string;
  /** Dew minus bubble temperature, K, at the pressure where the dew point is `glideAtDewC`. */
  readonly glideK: number;
  /** Dew-point temperature, °C, at whose pressure `glideK` is taken. */
  readonly glideAtDewC: number;
  /** Saturation temperatures accepted on both curves, °C. */
  readonly validRange: { readonly minC: number; readonly maxC: number };
  /** Where and why the tables end at validRange.maxC (a few K below the critical point, or the mixture model's limit). */
  readonly upperLimit: string;
  /** Critical point (CoolProp) for pure fluids; null for blends (their tables end below the mixture's critical region). */
  readonly critical: { readonly temperatureC: number; readonly pressureKPaAbs: number } | null;
  /** Absolute pressures accepted on each curve, kPa. */
  readonly validPressureKPaAbs: { readonly dew: PressureRangeKPaAbs; readonly bubble: PressureRangeKPaAbs };
  readonly kind: RefrigerantKind;
  /** True for R-744: very high standstill and operating pressures. */
  readonly highPressure: boolean;
  /** True for ASHRAE 34 class 2L, 2 or 3. */
  readonly flammable: boolean;
  /** Thermodynamic model behind the tables: a CoolProp multi-component mixture or a pure fluid. */
  readonly model: 'mixture' | 'pure';
  /** CoolProp fluid string the tables were generated from. */
  readonly dataSource: string;
}

export {
  RefrigerantRangeError,
  SupercriticalError,
  UnknownRefrigerantError,
  type RefrigerantErrorCode,
} from './errors';

// Slack on the ln P range check, absorbing the last-bit rounding of exp/log at the range ends
// (1e-12 relative pressure, ~1e-11 K); anything further out is refused, never clamped.
const LN_P_SLACK = 1e-12;
// Inverse-table nodes per forward segment.
const INVERSE_REFINEMENT = 2;

/** One saturation curve with precomputed forward and inverse cubic tables. */
class SaturationCurve {
  readonly minC: number;
  readonly maxC: number;
  readonly tInvStep: number;
  readonly tSegments: number;
  /** Per forward segment: a0..a3 of ln(P/kPa) = a0 + s(a1 + s(a2 + s a3)), s in [0, 1]. */
  readonly forward: Float64Array;
  readonly lnPMin: number;
  readonly lnPMax: number;
  readonly lnPInvStep: number;
  readonly pSegments: number;
  /** Per inverse segment: b0..b3 of T(°C) = b0 + s(b1 + s(b2 + s b3)), s in [0, 1]. */
  readonly inverse: Float64Array;
  readonly minKPa: number;
  readonly maxKPa: number;

  constructor(minC: number, maxC: number, lnPMicro: readonly number[]) {
    const n = lnPMicro.length - 1;
    if (n < 4) throw new Error('saturation table needs at least 5 nodes');
    const h = (maxC - minC) / n;
    const y = Float64Array.from(lnPMicro, (v) => v / LN_P_SCALE);
    const m = slopes(y, h);
    this.minC = minC;
    this.maxC = maxC;
    this.tSegments = n;
    this.tInvStep = 1 / h;
    this.forward = hermiteCoefficients(y, m, h);
    this.lnPMin = at(y, 0);
    this.lnPMax = at(y, n);
    this.minKPa = Math.exp(this.lnPMin);
    this.maxKPa = Math.exp(this.lnPMax);

    const pn = n * INVERSE_REFINEMENT;
    const dx = (this.lnPMax - this.lnPMin) / pn;
    const tNodes = new Float64Array(pn + 1);
    const dTdx = new Float64Array(pn + 1);
    let seg = 0;
    for (let j = 0; j <= pn; j++) {
      const x = j === pn ? this.lnPMax : this.lnPMin + j * dx;
      while (seg < n - 1 && at(y, seg + 1) <= x) seg++;
      const s = solveSegment(this.forward, seg, x);
      tNodes[j] = minC + (seg + s) * h;
      dTdx[j] = h / cubicDerivative(this.forward, seg, s);
    }
    this.pSegments = pn;
    this.lnPInvStep = 1 / dx;
    this.inverse = hermiteCoefficients(tNodes, dTdx, dx);
  }

  /** Saturation pressure, kPa abs, for a temperature already checked to be in range. */
  pressureKPa(temperatureC: number): number {
    const u = (temperatureC - this.minC) * this.tInvStep;
    let i = Math.floor(u);
    if (i >= this.tSegments) i = this.tSegments - 1;
    const s = u - i;
    const c = this.forward;
    const k = i << 2;
    return Math.exp(c[k]! + s * (c[k + 1]! + s * (c[k + 2]! + s * c[k + 3]!)));
  }

  /** Saturation temperature, °C, for ln(P/kPa) already checked to be in range (with slack). */
  temperatureC(lnP: number): number {
    let u = (lnP - this.lnPMin) * this.lnPInvStep;
    if (u < 0) u = 0;
    let i = Math.floor(u);
    if (i >= this.pSegments) i = this.pSegments - 1;
    const s = u - i;
    const c = this.inverse;
    const k = i << 2;
    return c[k]! + s * (c[k + 1]! + s * (c[k + 2]! + s * c[k + 3]!));
  }
}

function at(a: Float64Array, i: number): number {
  const v = a[i];
  if (v === undefined) throw new Error(`table index ${i} out of bounds`);
  return v;
}

/** dy/dx at each node by fourth-order finite differences (one-sided at the ends). */
function slopes(y: Float64Array, h: number): Float64Array {
  const n = y.length;
  const m = new Float64Array(n);
  const v = (i: number): number => at(y, i);
  for (let i = 0; i < n; i++) {
    if (i >= 2 && i <= n - 3) m[i] = (v(i - 2) - 8 * v(i - 1) + 8 * v(i + 1) - v(i + 2)) / (12 * h);
    else if (i === 0) m[i] = (-25 * v(0) + 48 * v(1) - 36 * v(2) + 16 * v(3) - 3 * v(4)) / (12 * h);
    else if (i === 1) m[i] = (-3 * v(0) - 10 * v(1) + 18 * v(2) - 6 * v(3) + v(4)) / (12 * h);
    else if (i === n - 1)
      m[i] = (25 * v(n - 1) - 48 * v(n - 2) + 36 * v(n - 3) - 16 * v(n - 4) + 3 * v(n - 5)) / (12 * h);
    else m[i] = (3 * v(n - 1) + 10 * v(n - 2) - 18 * v(n - 3) + 6 * v(n - 4) - v(n - 5)) / (12 * h);
  }
  return m;
}

/** Cubic Hermite coefficients per segment in the local variable s in [0, 1]. */
function hermiteCoefficients(y: Float64Array, dydx: Float64Array, h: number): Float64Array {
  const segments = y.length - 1;
  const c = new Float64Array(segments * 4);
  for (let i = 0; i < segments; i++) {
    const y0 = at(y, i);
    const y1 = at(y, i + 1);
    const m0 = at(dydx, i) * h;
    const m1 = at(dydx, i + 1) * h;
    c[4 * i] = y0;
    c[4 * i + 1] = m0;
    c[4 * i + 2] = 3 * (y1 - y0) - 2 * m0 - m1;
    c[4 * i + 3] = 2 * (y0 - y1) + m0 + m1;
  }
  return c;
}

function cubicValue(c: Float64Array, seg: number, s: number): number {
  const k = seg * 4;
  return at(c, k) + s * (at(c, k + 1) + s * (at(c, k + 2) + s * at(c, k + 3)));
}

/** d(value)/ds of one segment's cubic. */
function cubicDerivative(c: Float64Array, seg: number, s: number): number {
  const k = seg * 4;
  return at(c, k + 1) + s * (2 * at(c, k + 2) + s * 3 * at(c, k + 3));
}

/** Local s in [0, 1] where an increasing segment's cubic equals target (Newton, bisection-guarded). */
function solveSegment(c: Float64Array, seg: number, target: number): number {
  let lo = 0;
  let hi = 1;
  const f0 = cubicValue(c, seg, 0);
  const f1 = cubicValue(c, seg, 1);
  if (target <= f0) return 0;
  if (target >= f1) return 1;
  let s = (target - f0) / (f1 - f0);
  for (let iter = 0; iter < 60; iter++) {
    const f = cubicValue(c, seg, s) - target;
    if (f === 0) return s;
    if (f > 0) hi = s;
    else lo = s;
    const d = cubicDerivative(c, seg, s);
    let next = d > 0 ? s - f / d : Number.NaN;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (Math.abs(next - s) < 1e-15) return next;
    s = next;
  }
  return s;
}

interface RefrigerantTables {
  readonly dew: SaturationCurve;
  readonly bubble: SaturationCurve;
  readonly critical: { readonly temperatureC: number; readonly pressureKPaAbs: number } | null;
}

const GLIDE_AT_DEW_C = -10;
const TABLES = new Map<string, RefrigerantTables>();
const INFO = new Map<string, RefrigerantInfo>();

for (const g of GENERATED_REFRIGERANTS) {
  const id = g.id as RefrigerantId;
  const tables: RefrigerantTables = {
    dew: new SaturationCurve(g.minC, g.maxC, g.dewLnPkPaMicro),
    bubble: new SaturationCurve(g.minC, g.maxC, g.bubbleLnPkPaMicro),
    critical:
      g.criticalC === null || g.criticalKPaAbs === null
        ? null
        : Object.freeze({ temperatureC: g.criticalC, pressureKPaAbs: g.criticalKPaAbs }),
  };
  TABLES.set(id, tables);
  const pAtDew = tables.dew.pressureKPa(GLIDE_AT_DEW_C);
  const glide = GLIDE_AT_DEW_C - tables.bubble.temperatureC(Math.log(pAtDew));
  INFO.set(
    id,
    Object.freeze({
      id,
      name: g.name,
      safetyClass: g.safetyClass,
      gwp: g.gwp,
      gwpSource: g.gwpSource,
      glideK: Math.round(glide * 1000) / 1000 + 0, // + 0 turns -0 into 0
      glideAtDewC: GLIDE_AT_DEW_C,
      validRange: Object.freeze({ minC: g.minC, maxC: g.maxC }),
      upperLimit: g.upperLimit,
      critical: tables.critical,
      validPressureKPaAbs: Object.freeze({
        dew: Object.freeze({ min: tables.dew.minKPa, max: tables.dew.maxKPa }),
        bubble: Object.freeze({ min: tables.bubble.minKPa, max: tables.bubble.maxKPa }),
      }),
      kind: g.kind,
      highPressure: id === 'R-744',
      flammable: g.safetyClass !== 'A1',
      model: g.model,
      dataSource: `${GENERATED_SOURCE}, ${g.fluid}`,
    }),
  );
}

function tablesFor(id: RefrigerantId, curve: SaturationCurveName): RefrigerantTables {
  const t = TABLES.get(id);
  if (t === undefined) throw new UnknownRefrigerantError(String(id));
  if (curve !== 'dew' && curve !== 'bubble') throw new TypeError(`curve must be 'dew' or 'bubble', got ${String(curve)}`);
  return t;
}

/** Critical point of a pure fluid (CoolProp), or null for a blend; throws UnknownRefrigerantError. */
export function criticalPoint(id: RefrigerantId): { readonly temperatureC: number; readonly pressureKPaAbs: number } | null {
  return getRefrigerant(id).critical;
}

/** True when an absolute pressure, kPa, is at or above a pure fluid's critical pressure (never for blends). */
export function isSupercriticalPressure(id: RefrigerantId, pressureKPaAbs: number): boolean {
  const c = criticalPoint(id);
  return c !== null && pressureKPaAbs >= c.pressureKPaAbs;
}

/** The range error with, for a value above the tables, where and why they end (stated, never clamped). */
function withUpperLimit(e: RefrigerantRangeError, above: boolean): RefrigerantRangeError {
  const limit = INFO.get(e.id)?.upperLimit;
  if (above && limit !== undefined) e.message += `; this table ${limit}`;
  return e;
}

/** True if x is one of REFRIGERANT_IDS. */
export function isRefrigerantId(x: string): x is RefrigerantId {
  return TABLES.has(x);
}

/** Every refrigerant's facts, in REFRIGERANT_IDS order (a new array of frozen objects). */
export function listRefrigerants(): RefrigerantInfo[] {
  return REFRIGERANT_IDS.map((id) => getRefrigerant(id));
}

/** Facts for one refrigerant; throws UnknownRefrigerantError for an id Rimehold does not know. */
export function getRefrigerant(id: RefrigerantId): RefrigerantInfo {
  const info = INFO.get(id);
  if (info === undefined) throw new UnknownRefrigerantError(String(id));
  return info;
}

/** Saturation pressure, kPa absolute, at temperatureC (°C) on the dew or bubble curve. */
export function saturationPressure(id: RefrigerantId, temperatureC: number, curve: SaturationCurveName): number {
  const t = tablesFor(id, curve);
  const c = t[curve];
  // Written so that NaN fails the test and throws.
  if (!(temperatureC >= c.minC && temperatureC <= c.maxC)) {
    if (t.critical !== null && temperatureC >= t.critical.temperatureC) {
      throw new SupercriticalError(id, 'temperatureC', temperatureC, c.minC, c.maxC, curve, t.critical);
    }
    throw withUpperLimit(new RefrigerantRangeError(id, 'temperatureC', temperatureC, c.minC, c.maxC, curve), temperatureC > c.maxC);
  }
  return c.pressureKPa(temperatureC);
}

/** Saturation temperature, °C, at pressureKPaAbs (kPa absolute) on the dew or bubble curve. */
export function saturationTemperature(id: RefrigerantId, pressureKPaAbs: number, curve: SaturationCurveName): number {
  const t = tablesFor(id, curve);
  const c = t[curve];
  const lnP = Math.log(pressureKPaAbs); // NaN for NaN or negative input, -Infinity for 0
  if (!(lnP >= c.lnPMin - LN_P_SLACK && lnP <= c.lnPMax + LN_P_SLACK)) {
    if (t.critical !== null && pressureKPaAbs >= t.critical.pressureKPaAbs) {
      throw new SupercriticalError(id, 'pressureKPaAbs', pressureKPaAbs, c.minKPa, c.maxKPa, curve, t.critical);
    }
    throw withUpperLimit(new RefrigerantRangeError(id, 'pressureKPaAbs', pressureKPaAbs, c.minKPa, c.maxKPa, curve), lnP > c.lnPMax);
  }
  return c.temperatureC(lnP);
}

/** Temperature glide, K: dew minus bubble saturation temperature at pressureKPaAbs (kPa absolute). */
export function glideAtPressureK(id: RefrigerantId, pressureKPaAbs: number): number {
  return saturationTemperature(id, pressureKPaAbs, 'dew') - saturationTemperature(id, pressureKPaAbs, 'bubble');
}
