/**
 * The per-box rule engine: feed it readings (reading time), ticks (wall time) and the controller's
 * online status; it answers condition events (raise / clear / priority) for the server's alarm
 * service, which runs the ISA-18.2 lifecycle (shared/alarms/lifecycle.ts). Pure: no I/O, no clock.
 * Cheap per reading: fixed work per rule, no per-reading allocation besides the answer array.
 */
import { ALARM_RULES, type AlarmRuleId, type ConditionEvent, type RuleBoxSettings, type RuleReading, type RuleSkip } from '../alarms/types';
import { evalBoxAir, newBoxAirState, type BoxAirState } from './boxAir';
import type { RuleContext } from './condition';
import { evalCycles, newCyclesState, type CyclesState } from './cycles';
import { effectiveRule, type EffectiveRule } from './defaults';
import { newOfflineState, offlineCheck, offlineHeard, type OfflineState } from './offline';
import { evalSensors, newSensorState, type SensorState } from './sensors';
import { evalSuperheat, newSuperheatState, type SuperheatState } from './superheat';

/** What the engine tracks between readings, JSON-serialisable (a few hundred bytes plus two ≤64-entry rings). */
export interface EngineSnapshot {
  version: 1;
  lastTsMs: number | null;
  maintenanceUntilMs: number | null;
  prevCompressorOn: boolean | null;
  prevDefrostOn: boolean | null;
  compressorOnSinceMs: number | null;
  defrostStartMs: number | null;
  lastDefrostEndMs: number | null;
  lastDefrostDurationMs: number;
  defrostMaxCoilC: number | null;
  boxAir: BoxAirState;
  superheat: SuperheatState;
  cycles: CyclesState;
  sensors: SensorState;
  offline: OfflineState;
}

function freshSnapshot(): EngineSnapshot {
  return {
    version: 1,
    lastTsMs: null,
    maintenanceUntilMs: null,
    prevCompressorOn: null,
    prevDefrostOn: null,
    compressorOnSinceMs: null,
    defrostStartMs: null,
    lastDefrostEndMs: null,
    lastDefrostDurationMs: 0,
    defrostMaxCoilC: null,
    boxAir: newBoxAirState(),
    superheat: newSuperheatState(),
    cycles: newCyclesState(),
    sensors: newSensorState(),
    offline: newOfflineState(),
  };
}

function rulesFor(settings: RuleBoxSettings): Record<AlarmRuleId, EffectiveRule> {
  const out = {} as Record<AlarmRuleId, EffectiveRule>;
  for (const id of ALARM_RULES) out[id] = effectiveRule(settings, id);
  return out;
}

/** Evaluates every alarm rule of one box. */
export class BoxRuleEngine {
  private st: EngineSnapshot;
  private readonly lastSkips = new Map<AlarmRuleId, RuleSkip>();
  private out: ConditionEvent[] = [];
  private readonly ctx: RuleContext;

  constructor(settings: RuleBoxSettings, snapshot?: EngineSnapshot) {
    this.st = snapshot && snapshot.version === 1 ? (JSON.parse(JSON.stringify(snapshot)) as EngineSnapshot) : freshSnapshot();
    const skips = this.lastSkips;
    this.ctx = {
      settings,
      rules: rulesFor(settings),
      raiseBlocked: false,
      inDefrost: false,
      defrostStartMs: null,
      lastDefrostEndMs: null,
      defrostJustEnded: false,
      lastDefrostDurationMs: 0,
      defrostMaxCoilC: null,
      compressorStarted: false,
      compressorStopped: false,
      compressorOnSinceMs: null,
      skip(ruleId, reason, atMs) {
        const last = skips.get(ruleId);
        if (last && last.reason === reason) last.atMs = atMs;
        else skips.set(ruleId, { ruleId, reason, atMs });
      },
      emit: (ev) => {
        this.out.push(ev);
      },
    };
  }

  /** The last skip recorded per rule (at most one per rule). */
  get skips(): RuleSkip[] {
    return [...this.lastSkips.values()];
  }

  /** Replaces the box settings (limits, delays, overrides); takes effect from the next reading or tick. */
  updateSettings(s: RuleBoxSettings): void {
    this.ctx.settings = s;
    this.ctx.rules = rulesFor(s);
  }

  /** Sets (epoch ms) or ends (null) a maintenance window: conditions are tracked, nothing raises. */
  setMaintenance(untilMs: number | null): void {
    this.st.maintenanceUntilMs = untilMs;
  }

  /** Evaluates one reading (reading time tsMs); receivedAtMs is the wall time it arrived (default tsMs), for controller-offline. */
  onReading(r: RuleReading, receivedAtMs: number = r.tsMs): ConditionEvent[] {
    const out = this.begin(r.tsMs);
    const st = this.st;
    offlineHeard(st.offline, this.ctx, receivedAtMs);
    // An out-of-order reading says the controller is alive, but must not move any timer.
    if (st.lastTsMs !== null && r.tsMs <= st.lastTsMs) return out;
    st.lastTsMs = r.tsMs;
    this.track(r);
    evalSensors(st.sensors, this.ctx, r);
    evalBoxAir(st.boxAir, this.ctx, r);
    evalSuperheat(st.superheat, this.ctx, r);
    evalCycles(st.cycles, this.ctx, r);
    return out;
  }

  /** Wall-clock check (nowMs, epoch ms) for controller-offline; call it every few seconds. */
  onTick(nowMs: number): ConditionEvent[] {
    const out = this.begin(nowMs);
    offlineCheck(this.st.offline, this.ctx, nowMs);
    return out;
  }

  /** The controller's status topic (MQTT last will when offline) at atMs (epoch ms). */
  onControllerStatus(online: boolean, atMs: number): ConditionEvent[] {
    const out = this.begin(atMs);
    if (online) offlineHeard(this.st.offline, this.ctx, atMs);
    else {
      this.st.offline.lastWill = true;
      offlineCheck(this.st.offline, this.ctx, atMs);
    }
    return out;
  }

  /** The rules whose condition is raised now. */
  active(): AlarmRuleId[] {
    const s = this.st;
    const list: AlarmRuleId[] = [];
    const add = (id: AlarmRuleId, on: boolean) => {
      if (on) list.push(id);
    };
    add('box-air-high', s.boxAir.high.active);
    add('box-air-low', s.boxAir.low.active);
    add('superheat-low', s.superheat.low.active);
    add('superheat-high', s.superheat.high.active);
    add('defrost-overtime', s.cycles.overtime.active);
    add('defrost-timed-termination', s.cycles.timed.active);
    add('door-open', s.cycles.door.active);
    add('short-cycling', s.cycles.shortCycle.active);
    add('long-run', s.cycles.longRun.active);
    add('pump-down-failure', s.cycles.pumpDown.active);
    add('sensor-fault', s.sensors.cond.active);
    add('controller-offline', s.offline.cond.active);
    return list;
  }

  /** A JSON-serialisable copy of the engine's state, to restore timers after a restart. */
  snapshot(): EngineSnapshot {
    return JSON.parse(JSON.stringify(this.st)) as EngineSnapshot;
  }

  private begin(atMs: number): ConditionEvent[] {
    const out: ConditionEvent[] = [];
    this.out = out;
    const until = this.st.maintenanceUntilMs;
    this.ctx.raiseBlocked = until !== null && atMs < until;
    return out;
  }

  /** Compressor and defrost edges, shared by the rule families. */
  private track(r: RuleReading): void {
    const st = this.st;
    const c = this.ctx;
    const t = r.tsMs;
    c.compressorStarted = st.prevCompressorOn === false && r.compressorOn;
    c.compressorStopped = st.prevCompressorOn === true && !r.compressorOn;
    if (r.compressorOn) st.compressorOnSinceMs ??= t;
    else st.compressorOnSinceMs = null;
    st.prevCompressorOn = r.compressorOn;

    c.defrostJustEnded = false;
    if (r.defrostOn && st.prevDefrostOn !== true) {
      st.defrostStartMs = t;
      st.defrostMaxCoilC = r.coilInletC;
    } else if (r.defrostOn && r.coilInletC !== null) {
      st.defrostMaxCoilC = st.defrostMaxCoilC === null ? r.coilInletC : Math.max(st.defrostMaxCoilC, r.coilInletC);
    } else if (!r.defrostOn && st.prevDefrostOn === true) {
      c.defrostJustEnded = true;
      st.lastDefrostEndMs = t;
      st.lastDefrostDurationMs = st.defrostStartMs === null ? 0 : t - st.defrostStartMs;
      st.defrostStartMs = null;
    }
    st.prevDefrostOn = r.defrostOn;
    c.inDefrost = r.defrostOn;
    c.defrostStartMs = st.defrostStartMs;
    c.lastDefrostEndMs = st.lastDefrostEndMs;
    c.lastDefrostDurationMs = st.lastDefrostDurationMs;
    c.defrostMaxCoilC = st.defrostMaxCoilC;
    c.compressorOnSinceMs = st.compressorOnSinceMs;
  }
}
